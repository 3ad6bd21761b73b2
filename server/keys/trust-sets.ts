// Each model's trust set, as loggers follow it (DEVICE_API.md, "Trust sets"; the rules are the pure
// ones of server/images/trust.ts):
// - version 1 is the set loggers already hold: written when a model is created (or for an existing
//   model by migration 0016), or when the first signing key is registered;
// - registering or revoking a key, or changing a model's signing threshold, proposes the next version
//   from the facts as they now stand: the registered keys that are not revoked, and the model's
//   threshold (never more than the keys there are). A set proposed while another waits replaces it,
//   and its signatures start over, since they were over other bytes;
// - a proposed set is pending and is not served until signatures from the threshold of the PREVIOUS
//   version's keys verify over its canonical bytes (acceptTrustSet, the logger's own rule). Any key of
//   the previous set may sign, a revoked one included: that is how a logger is told to drop it;
// - a check-in that sends trust_version N gets version N + 1 when it is signed: one step at a time.
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { LoggerModel, SigningKey } from '../db/models';
import { problems } from '../http/problem';
import { recordActivity } from '../activity/service';
import type { RequestContext } from '../auth/actor';
import { ManifestError, parsePublicKeyPem, type SigningPublicKey } from '../images/manifest';
import {
  acceptTrustSet,
  judgeThreshold,
  keysOfTrustSet,
  signatureBytes,
  trustKeyOf,
  trustSetBytes,
  trustSetBodySchema,
  type SignedTrustSet,
  type TrustSetBody,
  type WireSignature,
} from '../images/trust';
import type { TrustSetVersionView, TrustSetView, TrustSignatureRequest } from '../../schemas/keys';

/** A trust set is meant for a year (our choice); its successor carries its own expiry. */
export const TRUST_SET_LIFETIME_MS = 365 * 24 * 3600 * 1000;

const REVOKED = 'revoked';

type Row = { modelId: string; version: number; body: Buffer; signedAt: Date | null; createdAt: Date };
type SigRow = { keyId: string; algorithm: WireSignature['algorithm']; signature: Buffer };

const wholeSeconds = (d: Date) => d.toISOString().replace(/\.\d{3}Z$/, 'Z');

function bodyOf(row: Row): TrustSetBody {
  return trustSetBodySchema.parse(JSON.parse(row.body.toString('utf8')));
}

async function rowsOf(sequelize: Sequelize, modelId: string, t?: Transaction): Promise<Row[]> {
  return sequelize.query<Row>(
    `SELECT model_id AS "modelId", version, body, signed_at AS "signedAt", created_at AS "createdAt"
       FROM trust_sets WHERE model_id = :modelId ORDER BY version`,
    { type: QueryTypes.SELECT, transaction: t, replacements: { modelId } },
  );
}

async function signaturesOf(sequelize: Sequelize, modelId: string, version: number, t?: Transaction): Promise<SigRow[]> {
  const rows = await sequelize.query<SigRow>(
    `SELECT k.key_id AS "keyId", k.algorithm, s.signature
       FROM trust_set_signatures s JOIN signing_keys k ON k.id = s.signing_key_id
      WHERE s.model_id = :modelId AND s.version = :version ORDER BY s.added_at, k.key_id`,
    { type: QueryTypes.SELECT, transaction: t, replacements: { modelId, version } },
  );
  return rows.map((r) => ({ ...r, keyId: r.keyId.trim() }));
}

const wire = (rows: SigRow[]): WireSignature[] => rows.map((r) => ({ key_id: r.keyId, algorithm: r.algorithm, signature: r.signature.toString('base64') }));

/** The registered keys a new set lists: every key that is not revoked, by key id. */
async function unrevokedKeys(t: Transaction): Promise<SigningPublicKey[]> {
  const keys = await SigningKey.findAll({ transaction: t, order: [['keyId', 'ASC']] });
  return keys.filter((k) => k.state !== REVOKED).map((k) => parsePublicKeyPem(k.publicKeyPem));
}

const sameFacts = (a: TrustSetBody, b: Pick<TrustSetBody, 'threshold' | 'keys'>) =>
  a.threshold === b.threshold && JSON.stringify(a.keys.map((k) => k.key_id).sort()) === JSON.stringify(b.keys.map((k) => k.key_id).sort());

/**
 * Brings a model's trust sets in line with the facts (keys and threshold) inside the caller's
 * transaction: writes version 1 when there is none, proposes (or replaces) the pending next version
 * when the facts differ from the newest signed set, and drops a pending set the facts no longer need.
 * Returns what it did, for the caller's activity row.
 */
export async function proposeTrustSet(sequelize: Sequelize, t: Transaction, modelId: string, now: Date): Promise<'first' | 'proposed' | 'unchanged'> {
  const model = await LoggerModel.findByPk(modelId, { transaction: t, lock: t.LOCK.UPDATE });
  if (!model) return 'unchanged';
  const keys = await unrevokedKeys(t);
  const rows = await rowsOf(sequelize, modelId, t);
  const signed = rows.filter((r) => r.signedAt !== null);
  const current = signed.length ? bodyOf(signed[signed.length - 1]) : null;
  const pending = rows.find((r) => r.signedAt === null) ?? null;
  // With no key left there is nothing a logger could verify next: keep what loggers hold.
  if (keys.length === 0) return 'unchanged';
  const facts = { threshold: Math.min(model.signingThreshold, keys.length), keys: keys.map(trustKeyOf) };
  const expires = wholeSeconds(new Date(now.getTime() + TRUST_SET_LIFETIME_MS));
  if (!current) {
    const body: TrustSetBody = { model: modelId, version: 1, ...facts, expires };
    await insertSet(sequelize, t, body, now, true);
    return 'first';
  }
  if (sameFacts(current, facts)) {
    if (pending) await sequelize.query('DELETE FROM trust_sets WHERE model_id = :modelId AND signed_at IS NULL', { transaction: t, replacements: { modelId } });
    return 'unchanged';
  }
  if (pending && sameFacts(bodyOf(pending), facts)) return 'unchanged';
  if (pending) await sequelize.query('DELETE FROM trust_sets WHERE model_id = :modelId AND signed_at IS NULL', { transaction: t, replacements: { modelId } });
  await insertSet(sequelize, t, { model: modelId, version: current.version + 1, ...facts, expires }, now, false);
  return 'proposed';
}

async function insertSet(sequelize: Sequelize, t: Transaction, body: TrustSetBody, now: Date, signed: boolean) {
  await sequelize.query(
    `INSERT INTO trust_sets (model_id, version, body, threshold, expires_at, created_at, signed_at)
     VALUES (:model, :version, :body, :threshold, :expires, :now, :signedAt)`,
    {
      transaction: t,
      replacements: {
        model: body.model,
        version: body.version,
        body: trustSetBytes(body),
        threshold: body.threshold,
        expires: body.expires,
        now: now.toISOString(),
        signedAt: signed ? now.toISOString() : null,
      },
    },
  );
}

/** proposeTrustSet for every model (a key registered or revoked concerns them all). */
export async function proposeTrustSets(sequelize: Sequelize, t: Transaction, now: Date): Promise<number> {
  const models = await LoggerModel.findAll({ transaction: t, attributes: ['id'], order: [['id', 'ASC']] });
  let proposed = 0;
  for (const m of models) if ((await proposeTrustSet(sequelize, t, m.id, now)) === 'proposed') proposed++;
  return proposed;
}

// ─── The console's view ─────────────────────────────────────────────────────

function viewOf(body: TrustSetBody, row: Row, sigs: SigRow[], signers: { keys: SigningPublicKey[]; threshold: number } | null, names: Map<string, string>): TrustSetVersionView {
  const verdict = signers ? judgeThreshold(trustSetBytes(body), wire(sigs), signers.keys, signers.threshold) : null;
  return {
    version: body.version,
    threshold: body.threshold,
    keys: body.keys.map((k) => ({ keyId: k.key_id, algorithm: k.algorithm, name: names.get(k.key_id) ?? '' })),
    expires: body.expires,
    createdAt: row.createdAt.toISOString(),
    signedAt: row.signedAt ? row.signedAt.toISOString() : null,
    signedBy: verdict ? verdict.signedBy.map((id) => ({ keyId: id, name: names.get(id) ?? '' })) : [],
    needs: signers?.threshold ?? 0,
    missing: verdict ? verdict.missing.map((id) => ({ keyId: id, name: names.get(id) ?? '' })) : [],
    canonical: trustSetBytes(body).toString('utf8'),
  };
}

/** GET /api/models/:id/trust: the set loggers follow now, and the one waiting for signatures. */
export async function trustSetsView(sequelize: Sequelize, modelId: string): Promise<TrustSetView> {
  const model = await LoggerModel.findByPk(modelId, { attributes: ['id', 'signingThreshold'] });
  if (!model) throw problems.notFound('model');
  const rows = await rowsOf(sequelize, modelId);
  const names = new Map((await SigningKey.findAll({ attributes: ['keyId', 'name'] })).map((k) => [k.keyId, k.name]));
  const signed = rows.filter((r) => r.signedAt !== null);
  const currentRow = signed[signed.length - 1] ?? null;
  const pendingRow = rows.find((r) => r.signedAt === null) ?? null;
  const current = currentRow ? bodyOf(currentRow) : null;
  const previousOf = (version: number) => {
    const prev = signed.find((r) => r.version === version - 1);
    if (!prev) return null;
    const b = bodyOf(prev);
    return { keys: keysOfTrustSet(b), threshold: b.threshold };
  };
  return {
    modelId,
    signingThreshold: model.signingThreshold,
    current: currentRow && current ? viewOf(current, currentRow, await signaturesOf(sequelize, modelId, current.version), previousOf(current.version), names) : null,
    pending: pendingRow ? viewOf(bodyOf(pendingRow), pendingRow, await signaturesOf(sequelize, modelId, pendingRow.version), previousOf(pendingRow.version), names) : null,
  };
}

// ─── Signing a pending set ──────────────────────────────────────────────────

/**
 * POST /api/models/:id/trust/signatures: one signature over the pending set's canonical bytes by a key
 * of the previous set. Kept only when it verifies; a second signature by the same key counts once.
 * When the previous set's threshold is reached, the set is signed and served from then on.
 */
export async function signTrustSet(sequelize: Sequelize, ctx: RequestContext, modelId: string, input: TrustSignatureRequest, now: Date): Promise<TrustSetView> {
  await sequelize.transaction(async (t) => {
    const model = await LoggerModel.findByPk(modelId, { transaction: t, lock: t.LOCK.UPDATE });
    if (!model) throw problems.notFound('model');
    const rows = await rowsOf(sequelize, modelId, t);
    const pendingRow = rows.find((r) => r.signedAt === null);
    if (!pendingRow) throw problems.conflict(`${model.name} has no trust set waiting for signatures.`, { allowedActions: [] });
    const pending = bodyOf(pendingRow);
    if (input.version !== pending.version) {
      throw problems.conflict(`The trust set waiting for signatures is version ${pending.version}, not ${input.version}: sign its canonical form again.`, {
        errors: [{ path: 'version', message: `the pending version is ${pending.version}` }],
      });
    }
    const previous = bodyOf(rows.find((r) => r.version === pending.version - 1)!);
    if (!previous.keys.some((k) => k.key_id === input.keyId)) {
      throw problems.unprocessable(`Key ${input.keyId} is not in version ${previous.version} of the trust set: only its keys can vouch for the next one.`, [
        { path: 'keyId', message: 'not a key of the previous trust set' },
      ]);
    }
    const signature: WireSignature = { key_id: input.keyId, algorithm: input.algorithm, signature: input.signature };
    let bytes: Buffer;
    try {
      bytes = signatureBytes(signature);
    } catch (error) {
      if (error instanceof ManifestError) throw problems.badRequest(`The signature cannot be used: ${error.message}.`, [{ path: 'signature', message: error.message }]);
      throw error;
    }
    const verdict = judgeThreshold(trustSetBytes(pending), [signature], keysOfTrustSet(previous), 1);
    if (!verdict.met) {
      const why = verdict.rejected[0]?.why ?? 'the signature does not verify';
      throw problems.unprocessable(`The signature by key ${input.keyId} does not count: ${why}. Sign the pending set's canonical form (heliodor trust sign).`, [
        { path: 'signature', message: why },
      ]);
    }
    const key = await SigningKey.findOne({ where: { keyId: input.keyId }, transaction: t });
    await sequelize.query(
      `INSERT INTO trust_set_signatures (model_id, version, signing_key_id, signature, added_at) VALUES (:modelId, :version, :keyId, :signature, :now)
       ON CONFLICT DO NOTHING`,
      { transaction: t, replacements: { modelId, version: pending.version, keyId: key!.id, signature: bytes, now: now.toISOString() } },
    );
    const all: SignedTrustSet = { ...pending, signatures: wire(await signaturesOf(sequelize, modelId, pending.version, t)) };
    const accepted = acceptTrustSet(previous, all);
    if (accepted.ok) {
      await sequelize.query('UPDATE trust_sets SET signed_at = :now WHERE model_id = :modelId AND version = :version', {
        transaction: t,
        replacements: { modelId, version: pending.version, now: now.toISOString() },
      });
    }
    await recordActivity(t, ctx, {
      action: accepted.ok ? 'trust.set_signed' : 'trust.signature_added',
      targetType: 'model',
      targetId: modelId,
      summary: accepted.ok
        ? `${ctx.actor.name} added key ${input.keyId}'s signature to trust set version ${pending.version} of ${model.name}; it is signed and loggers follow it from their next check-in`
        : `${ctx.actor.name} added key ${input.keyId}'s signature to trust set version ${pending.version} of ${model.name}`,
      details: { version: pending.version, keyId: input.keyId },
    });
  });
  return trustSetsView(sequelize, modelId);
}

// ─── What a check-in serves ─────────────────────────────────────────────────

/** The signed set that follows the logger's version, with its signatures; null when it holds the newest. */
export async function nextTrustSetFor(sequelize: Sequelize, modelId: string, loggerVersion: number): Promise<SignedTrustSet | null> {
  const [row] = await sequelize.query<Row>(
    `SELECT model_id AS "modelId", version, body, signed_at AS "signedAt", created_at AS "createdAt"
       FROM trust_sets WHERE model_id = :modelId AND version = :version AND signed_at IS NOT NULL`,
    { type: QueryTypes.SELECT, replacements: { modelId, version: loggerVersion + 1 } },
  );
  if (!row) return null;
  return { ...bodyOf(row), signatures: wire(await signaturesOf(sequelize, modelId, row.version)) };
}

/** The newest signed set of a model with its signatures (what a logger made today is given). */
export async function currentTrustSet(sequelize: Sequelize, modelId: string): Promise<SignedTrustSet | null> {
  const rows = (await rowsOf(sequelize, modelId)).filter((r) => r.signedAt !== null);
  const row = rows[rows.length - 1];
  if (!row) return null;
  return { ...bodyOf(row), signatures: wire(await signaturesOf(sequelize, modelId, row.version)) };
}
