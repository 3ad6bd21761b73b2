// Signing keys: the public halves release engineers sign with offline. States active → retired
// (still verifies published releases, signs nothing new) → revoked (its releases are flagged).
import { QueryTypes, type Sequelize } from 'sequelize';
import { SigningKey, type KeyState } from '../db/models';
import { problems } from '../http/problem';
import { recordActivity } from '../activity/service';
import type { Actor, RequestContext } from '../auth/actor';
import { canOf, stateAllows } from '../auth/policies';
import { ManifestError, parsePublicKeyPem } from '../images/manifest';
import { proposeTrustSets } from './trust-sets';
import { KEY_VERBS, type RegisterKeyRequest, type SigningKeyView } from '../../schemas/keys';

const iso = (d: Date | null | undefined) => (d ? d.toISOString() : null);

const trustNote = (proposed: number) =>
  proposed === 0 ? '' : `; ${proposed === 1 ? 'a new trust set waits' : `${proposed} new trust sets wait`} for signatures before loggers follow`;

export function presentKey(actor: Actor, key: SigningKey, releaseCount: number): SigningKeyView {
  return {
    id: key.id,
    name: key.name,
    keyId: key.keyId,
    algorithm: key.algorithm,
    state: key.state,
    publicKeyPem: key.publicKeyPem,
    createdAt: key.createdAt.toISOString(),
    retiredAt: iso(key.retiredAt),
    revokedAt: iso(key.revokedAt),
    releaseCount,
    can: canOf(actor, { kind: 'key', state: key.state }),
  };
}

async function releaseCounts(sequelize: Sequelize, ids: string[]): Promise<Map<string, number>> {
  if (ids.length === 0) return new Map();
  const rows = await sequelize.query<{ id: string; n: number }>(
    'SELECT signing_key_id AS id, count(*)::int AS n FROM releases WHERE signing_key_id IN (:ids) GROUP BY signing_key_id',
    { type: QueryTypes.SELECT, replacements: { ids } },
  );
  return new Map(rows.map((r) => [r.id, r.n]));
}

export async function listKeys(sequelize: Sequelize, actor: Actor) {
  const keys = await SigningKey.findAll({ order: [['createdAt', 'DESC']] });
  const counts = await releaseCounts(sequelize, keys.map((k) => k.id));
  return { rows: keys.map((k) => presentKey(actor, k, counts.get(k.id) ?? 0)), total: keys.length };
}

export async function registerKey(sequelize: Sequelize, ctx: RequestContext, input: RegisterKeyRequest, now: Date) {
  let parsed;
  try {
    parsed = parsePublicKeyPem(input.publicKeyPem);
  } catch (error) {
    if (!(error instanceof ManifestError)) throw error;
    if (error.code === 'private_key_given') {
      // Say it plainly: the private key has now been exposed to this server's request path.
      throw problems.badRequest('Never send a private key: register the public key (the .public.pem file) and keep the private key offline.', [
        { path: 'publicKeyPem', message: error.message },
      ]);
    }
    throw problems.badRequest(`The public key cannot be used: ${error.message}.`, [{ path: 'publicKeyPem', message: error.message }]);
  }
  const existing = await SigningKey.findOne({ where: { keyId: parsed.keyId } });
  if (existing) {
    throw problems.conflict(`This key (key id ${parsed.keyId}) is already registered as "${existing.name}".`, {
      errors: [{ path: 'publicKeyPem', message: `already registered as "${existing.name}"` }],
    });
  }
  const key = await sequelize.transaction(async (t) => {
    const created = await SigningKey.create(
      {
        name: input.name,
        keyId: parsed.keyId,
        algorithm: parsed.algorithm,
        publicKeyPem: parsed.pem,
        createdBy: ctx.actor.type === 'person' ? ctx.actor.id : null,
        createdAt: now,
      },
      { transaction: t },
    );
    const proposed = await proposeTrustSets(sequelize, t, now);
    await recordActivity(t, ctx, {
      action: 'key.registered',
      targetType: 'signing_key',
      targetId: created.id,
      summary: `${ctx.actor.name} registered signing key "${created.name}" (${created.algorithm}, key id ${created.keyId})${trustNote(proposed)}`,
      details: { trustSetsProposed: proposed },
    });
    return created;
  });
  return presentKey(ctx.actor, key, 0);
}

/** Where each move leads; which states allow it is the key policy's (server/auth/policies.ts). */
const keyMoves: Record<'retire' | 'revoke', { to: KeyState; verb: 'retired' | 'revoked' }> = {
  retire: { to: 'retired', verb: 'retired' },
  revoke: { to: 'revoked', verb: 'revoked' },
};

export async function changeKeyState(sequelize: Sequelize, ctx: RequestContext, id: string, move: 'retire' | 'revoke', now: Date) {
  const rule = keyMoves[move];
  const key = await sequelize.transaction(async (t) => {
    const found = await SigningKey.findByPk(id, { transaction: t, lock: t.LOCK.UPDATE });
    if (!found) throw problems.notFound('signing key');
    const resource = { kind: 'key', state: found.state } as const;
    if (!stateAllows(move, resource)) {
      const allowed = KEY_VERBS.filter((m) => stateAllows(m, resource));
      throw problems.conflict(
        `A ${found.state} key cannot be ${rule.verb}${allowed.length ? `; it can be: ${allowed.map((m) => (m === 'retire' ? '“Retire”' : '“Revoke”')).join(', ')}` : ': revoked is final'}.`,
        { allowedActions: allowed },
      );
    }
    found.state = rule.to;
    if (move === 'retire') found.retiredAt = now;
    else found.revokedAt = now;
    await found.save({ transaction: t });
    // Retiring keeps the key in the trust sets (it still verifies what it signed); revoking takes it out.
    const proposed = move === 'revoke' ? await proposeTrustSets(sequelize, t, now) : 0;
    await recordActivity(t, ctx, {
      action: `key.${rule.verb}`,
      targetType: 'signing_key',
      targetId: found.id,
      summary: `${ctx.actor.name} ${rule.verb} signing key "${found.name}" (key id ${found.keyId})${trustNote(proposed)}`,
      details: { trustSetsProposed: proposed },
    });
    return found;
  });
  const counts = await releaseCounts(sequelize, [key.id]);
  return presentKey(ctx.actor, key, counts.get(key.id) ?? 0);
}
