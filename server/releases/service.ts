// Releases: created from a verified upload, edited while draft, moved through the lifecycle.
// Every mutation is one transaction with its history row (release_transitions) and activity row.
import semver from 'semver';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { Image, LoggerModel, Release, ReleasePilotSite, ReleaseTransition, SigningKey } from '../db/models';
import { problems, Problem, type FieldError } from '../http/problem';
import { parse } from '../http/validate';
import { recordActivity } from '../activity/service';
import type { RequestContext } from '../auth/actor';
import { decodeSignature, ManifestError, parsePublicKeyPem, parseSignedManifest, verifyManifestSignature, type Manifest } from '../images/manifest';
import type { ImageStore } from '../images/store';
import type { UploadParts } from '../images/upload';
import type { Mailer } from '../mail/mailer';
import { shareThreshold } from '../rollout/cohort';
import { canDelete } from '../rollout/lifecycle';
import { existingSiteIds, presentRelease } from './presenter';
import { applyTransition, lockRelease } from './transitions';
import { DRIFT_TRIP_POINT_NAMES, type LoggerStatus } from '../../schemas/words';
import { uploadFields, type AddSignatureRequest, type PatchReleaseRequest, type ReleaseEstimate, type ResignRequest, type TransitionRequest } from '../../schemas/releases';
import type { SignatureRequest } from '../../schemas/keys';
import { RELEASE_EVENTS } from '../../schemas/words';

export type ReleaseDeps = {
  sequelize: Sequelize;
  store: ImageStore;
  now: () => Date;
  mailer: Mailer;
  logger?: { warn(o: object, msg: string): void; error(o: object, msg: string): void };
};

const label = (release: { version: string }, modelName: string) => `${modelName} ${release.version}`;

const ENROLLED: LoggerStatus = 'enrolled';

function manifestProblem(error: ManifestError): Problem {
  const errors: FieldError[] = error.errors.length ? error.errors : [{ path: error.field, message: error.message }];
  const what = error.field === 'signature' ? 'signature' : 'manifest';
  return problems.badRequest(`The ${what} cannot be used: ${error.message}.`, errors);
}

const refuse = (path: string, detail: string, message = detail) => problems.unprocessable(detail, [{ path, message }]);

/** Finds the registered key that made the signature; only active keys may sign an upload. */
async function signingKeyFor(manifestBytes: Buffer, signatureText: string): Promise<SigningKey> {
  const keys = await SigningKey.findAll({ order: [['createdAt', 'ASC']] });
  const active = keys.filter((k) => k.state === 'active');
  // Both algorithms use 64-byte signatures; decode with the algorithm whose hint helps most (DER for ECDSA).
  const algorithm = keys.some((k) => k.algorithm === 'ecdsa-p256-sha256') ? 'ecdsa-p256-sha256' : 'ed25519';
  let signature: Buffer;
  try {
    signature = decodeSignature(signatureText, algorithm);
  } catch (error) {
    if (error instanceof ManifestError) throw manifestProblem(error);
    throw error;
  }
  const signedBy = (key: SigningKey) => verifyManifestSignature(manifestBytes, signature, parsePublicKeyPem(key.publicKeyPem));
  const match = active.find(signedBy);
  if (match) return match;
  const inactive = keys.find((k) => k.state !== 'active' && signedBy(k));
  if (inactive) {
    const why = inactive.state === 'revoked' ? 'uploads signed by a revoked key are refused' : 'a retired key signs nothing new';
    throw refuse('signature', `The manifest is signed by key "${inactive.name}" (key id ${inactive.keyId}), which is ${inactive.state}: ${why}. Sign with an active key.`);
  }
  if (active.length === 0) {
    throw refuse('signature', 'No active signing key is registered: an admin registers the public key under Signing keys first.');
  }
  throw refuse('signature', 'The signature does not match the manifest with any active signing key: check the key used and that the manifest file was not changed after signing.');
}

/**
 * The upload's checks, in order: every part present, the manifest, a signature by an active key, the
 * image's size and digest, the model and its boards, a version not uploaded before, a security counter
 * no lower than the published ones. Throws the first refusal; nothing is written here.
 */
async function checkUpload(
  parts: UploadParts,
  now: Date,
): Promise<{ manifest: Manifest; signers: { key: SigningKey; signature: Buffer }[]; model: LoggerModel; image: NonNullable<UploadParts['image']> }> {
  const missing = (['image', 'manifest', 'signature'] as const).filter((name) => (name === 'signature' ? parts.signatures.length === 0 : !parts[name]));
  if (missing.length) {
    throw problems.badRequest(`The upload needs ${missing.join(', ')} (multipart/form-data with image, manifest and signature).`,
      missing.map((path) => ({ path, message: 'is required' })));
  }
  const manifestBytes = parts.manifest!;
  let manifest: Manifest;
  try {
    manifest = parseSignedManifest(manifestBytes);
  } catch (error) {
    if (error instanceof ManifestError) throw manifestProblem(error);
    throw error;
  }
  checkExpiry(manifest, now);
  const signers = await signersOf(manifestBytes, parts.signatures);
  const image = parts.image!;
  if (image.size !== manifest.image_size) {
    throw refuse('image', `The image is ${image.size} bytes but the manifest says ${manifest.image_size}: this is not the image that was signed.`);
  }
  if (image.sha256 !== manifest.image_sha256) {
    throw refuse('image', `The image's SHA-256 is ${image.sha256} but the manifest says ${manifest.image_sha256}: this is not the image that was signed.`);
  }
  const model = await LoggerModel.findByPk(manifest.model);
  if (!model) throw refuse('manifest.model', `No model has the id ${manifest.model}: copy the model id from the Models screen.`);
  const known = model.boards.map((b) => b.label);
  const unknown = manifest.board_revisions.filter((b) => !known.includes(b));
  if (unknown.length) {
    throw refuse('manifest.board_revisions', `${model.name} has no board revision ${unknown.join(', ')} (it has ${known.join(', ')}).`);
  }
  const versions = await Release.findAll({ where: { modelId: model.id }, attributes: ['id', 'version', 'state', 'securityCounter'] });
  // Build metadata does not count in precedence (semver.org §10), so 2.4.0+b7 would be the same version as 2.4.0 to a logger.
  const same = versions.find((r) => semver.eq(r.version, manifest.version));
  if (same) {
    throw new Problem(409, 'conflict', 'Conflict', `${model.name} already has release ${same.version}: a version is uploaded once (delete the draft first to replace it).`, {
      errors: [{ path: 'manifest.version', message: `${same.version} already exists for ${model.name}` }],
    });
  }
  const published = versions.filter((r) => r.state !== 'draft').map((r) => r.securityCounter);
  const highest = published.length ? Math.max(...published) : null;
  if (highest !== null && manifest.security_counter < highest) {
    throw refuse('manifest.security_counter',
      `The security counter ${manifest.security_counter} is below ${highest}, the highest among ${model.name}'s published releases: loggers would refuse this image.`);
  }
  return { manifest, signers, model, image };
}

/** A manifest's `expires` must leave the release room to go out: not past, and not within 24 hours (our rule). */
export const MIN_MANIFEST_LIFE_MS = 24 * 3600 * 1000;

function checkExpiry(manifest: Manifest, now: Date) {
  if (!manifest.expires) return;
  const left = Date.parse(manifest.expires) - now.getTime();
  if (left <= 0) {
    throw refuse('manifest.expires', `The manifest expired at ${manifest.expires}: sign a new manifest with a later expiry.`);
  }
  if (left < MIN_MANIFEST_LIFE_MS) {
    throw refuse('manifest.expires', `The manifest expires at ${manifest.expires}, less than 24 hours from now: too soon for a rollout; sign it with a later expiry.`);
  }
}

/** Every signature must be by an active registered key; one key's signatures count once (the first is kept). */
async function signersOf(manifestBytes: Buffer, signatures: readonly string[]): Promise<{ key: SigningKey; signature: Buffer }[]> {
  const signers: { key: SigningKey; signature: Buffer }[] = [];
  for (const text of signatures) {
    const key = await signingKeyFor(manifestBytes, text);
    if (!signers.some((s) => s.key.id === key.id)) signers.push({ key, signature: Buffer.from(text.trim(), 'base64') });
  }
  return signers;
}

export async function createRelease(deps: ReleaseDeps, ctx: RequestContext, parts: UploadParts) {
  const fields = parse(uploadFields, parts.fields);
  const now = deps.now();
  const { manifest, signers, model, image } = await checkUpload(parts, now);
  const key = signers[0].key;
  const channel = fields.channel ?? (semver.prerelease(manifest.version) ? 'early' : 'stable');
  let createdFile = false;
  try {
    const release = await deps.sequelize.transaction(async (t) => {
      // DO UPDATE (not DO NOTHING) so that an existing row is locked: a concurrent DELETE of the last
      // draft using this image waits for this upload, then sees it and keeps the file.
      await deps.sequelize.query('INSERT INTO images (sha256, size, created_at) VALUES (:sha256, :size, :now) ON CONFLICT (sha256) DO UPDATE SET sha256 = EXCLUDED.sha256', {
        transaction: t,
        replacements: { sha256: image.sha256, size: image.size, now: now.toISOString() },
      });
      const created = await Release.create(
        {
          modelId: model.id,
          version: manifest.version,
          channel,
          boards: manifest.board_revisions,
          manifestBoards: manifest.board_revisions,
          securityCounter: manifest.security_counter,
          imageSha256: image.sha256,
          manifest: parts.manifest!,
          // The first signature stays on the row (and in the offer's single fields); a trigger (migration 0016)
          // copies it into release_signatures, and the others follow below.
          signature: signers[0].signature,
          signingKeyId: key.id,
          expiresAt: manifest.expires ? new Date(manifest.expires) : null,
          notes: fields.notes ?? '',
          createdBy: ctx.actor.type === 'person' ? ctx.actor.id : null,
          createdAt: now,
          updatedAt: now,
        },
        { transaction: t },
      );
      for (const more of signers.slice(1)) await insertSignature(deps.sequelize, t, created.id, more.key.id, more.signature, now, ctx.actor.name);
      await ReleaseTransition.create(
        { releaseId: created.id, at: now, action: 'upload', fromState: null, toState: 'draft', share: 0, reason: null, actorType: ctx.actor.type, actorName: ctx.actor.name },
        { transaction: t },
      );
      await recordActivity(t, ctx, {
        action: 'release.uploaded',
        targetType: 'release',
        targetId: created.id,
        summary: `${ctx.actor.name} uploaded ${label(created, model.name)} (draft, ${channel}, signed by key${signers.length > 1 ? 's' : ''} ${signers.map((x) => x.key.keyId).join(', ')})`,
        details: { sha256: image.sha256, size: image.size, keyId: key.keyId, keyIds: signers.map((x) => x.key.keyId) },
      });
      // Last step before commit: the image takes its final name only when every row is written.
      createdFile = await image.commit();
      return created;
    });
    return presentRelease(deps.sequelize, release);
  } catch (error) {
    // The rows were rolled back; a file this upload created must not outlive them.
    if (createdFile) await deps.store.remove(image.sha256).catch(() => undefined);
    throw error;
  }
}

async function lockedRelease(t: Transaction, id: string): Promise<Release> {
  const release = await lockRelease(t, id);
  if (!release) throw problems.notFound('release');
  return release;
}

async function modelName(modelId: string, t?: Transaction) {
  return (await LoggerModel.findByPk(modelId, { transaction: t, attributes: ['name'] }))?.name ?? 'model';
}

export async function patchRelease(deps: ReleaseDeps, ctx: RequestContext, id: string, input: PatchReleaseRequest) {
  const release = await deps.sequelize.transaction(async (t) => {
    const found = await lockedRelease(t, id);
    if (found.state !== 'draft') {
      throw problems.conflict(`Only a draft can be edited; this release is ${found.state}.`, { allowedActions: [] });
    }
    const errors: FieldError[] = [];
    if (input.boards) {
      const outside = input.boards.filter((b) => !found.manifestBoards.includes(b));
      if (outside.length) errors.push({ path: 'boards', message: `${outside.join(', ')} not in the signed manifest (${found.manifestBoards.join(', ')})` });
    }
    if (input.pilotSiteIds) {
      const existing = await existingSiteIds(input.pilotSiteIds);
      const missing = input.pilotSiteIds.filter((s) => !existing.has(s));
      if (missing.length) errors.push({ path: 'pilotSiteIds', message: `no such site: ${missing.join(', ')}` });
    }
    if (errors.length) throw problems.badRequest(`Check ${errors.map((e) => e.path).join(', ')}.`, errors);

    const changed: string[] = [];
    const set = <K extends keyof Release & keyof PatchReleaseRequest>(k: K, v: Release[K] | undefined) => {
      if (v === undefined) return;
      if (JSON.stringify(found[k]) !== JSON.stringify(v)) changed.push(k);
      found.set(k, v);
    };
    set('boards', input.boards);
    set('upgradeFrom', input.upgradeFrom);
    set('daylightWindow', input.daylightWindow);
    set('tripFailureRatio', input.tripFailureRatio);
    set('tripMinReports', input.tripMinReports);
    set('tripResetFactor', input.tripResetFactor);
    for (const name of DRIFT_TRIP_POINT_NAMES) set(name, input[name]);
    set('notes', input.notes);
    set('channel', input.channel);
    if (input.pilotSiteIds) {
      const before = (await ReleasePilotSite.findAll({ where: { releaseId: id }, transaction: t })).map((p) => p.siteId).sort();
      if (JSON.stringify(before) !== JSON.stringify([...input.pilotSiteIds].sort())) changed.push('pilotSiteIds');
      await ReleasePilotSite.destroy({ where: { releaseId: id }, transaction: t });
      await ReleasePilotSite.bulkCreate(input.pilotSiteIds.map((siteId) => ({ releaseId: id, siteId })), { transaction: t });
    }
    found.updatedAt = deps.now();
    await found.save({ transaction: t });
    await recordActivity(t, ctx, {
      action: 'release.edited',
      targetType: 'release',
      targetId: id,
      summary: `${ctx.actor.name} edited ${label(found, await modelName(found.modelId, t))}${changed.length ? ` (${changed.join(', ')})` : ' (no changes)'}`,
      details: { changed },
    });
    return found;
  });
  return presentRelease(deps.sequelize, release);
}

export async function deleteRelease(deps: ReleaseDeps, ctx: RequestContext, id: string) {
  await deps.sequelize.transaction(async (t) => {
    const found = await lockedRelease(t, id);
    if (!canDelete(found.state)) {
      throw problems.conflict(`Only a draft can be deleted; this release is ${found.state} and keeps its history.`, { allowedActions: [] });
    }
    const name = await modelName(found.modelId, t);
    await found.destroy({ transaction: t });
    // Lock the image row first, so an upload of the same image either finished (and is counted) or waits.
    await deps.sequelize.query('SELECT sha256 FROM images WHERE sha256 = :sha FOR UPDATE', { transaction: t, replacements: { sha: found.imageSha256 } });
    const [{ n }] = await deps.sequelize.query<{ n: number }>('SELECT count(*)::int AS n FROM releases WHERE image_sha256 = :sha', {
      type: QueryTypes.SELECT,
      transaction: t,
      replacements: { sha: found.imageSha256 },
    });
    if (n === 0) await Image.destroy({ where: { sha256: found.imageSha256 }, transaction: t });
    await recordActivity(t, ctx, {
      action: 'release.deleted',
      targetType: 'release',
      targetId: id,
      summary: `${ctx.actor.name} deleted the draft ${label(found, name)}; the version is free again`,
    });
    // Last step, still holding the image row's lock: an upload waiting on it will find no file and write it anew.
    if (n === 0) {
      await deps.store.remove(found.imageSha256).catch((error: Error) => deps.logger?.warn({ err: error, sha256: found.imageSha256 }, 'image file left behind'));
    }
  });
}

/** A person's lifecycle action from the console, written by the one writer of transitions (transitions.ts). */
export async function transitionRelease(deps: ReleaseDeps, ctx: RequestContext, id: string, input: TransitionRequest) {
  const release = await deps.sequelize.transaction(async (t) => {
    const found = await lockedRelease(t, id);
    // A draft goes out only with its model's signing rule met (the start_pilot guard in applyTransition).
    return applyTransition(t, found, input, { ...ctx, now: deps.now(), mailer: deps.mailer, log: deps.logger });
  });
  return presentRelease(deps.sequelize, release);
}

export async function getRelease(deps: ReleaseDeps, id: string) {
  const release = await Release.findByPk(id);
  if (!release) throw problems.notFound('release');
  return presentRelease(deps.sequelize, release);
}

/**
 * How many loggers a share would reach: of the release's model, channel and boards, enrolled and not
 * retired, running an older version (by semver precedence; an unknown running version is not
 * counted). Pilot-site loggers count at every share. The cohort bucket is computed in SQL with the
 * same definition as server/rollout/cohort.ts.
 */
export async function estimateShare(deps: ReleaseDeps, id: string, share: number): Promise<ReleaseEstimate> {
  const release = await Release.findByPk(id);
  if (!release) throw problems.notFound('release');
  const rows = await deps.sequelize.query<{ id: string; firmware: string | null; bucket: number; pilot: boolean }>(
    `SELECT l.id, l.firmware,
            (('x' || substr(encode(sha256((l.id::text || ':' || :releaseId)::bytea), 'hex'), 1, 8))::bit(32)::bigint % 10000)::int AS bucket,
            (l.site_id IS NOT NULL AND l.site_id IN (SELECT site_id FROM release_pilot_sites WHERE release_id = :releaseId)) AS pilot
       FROM loggers l
      WHERE l.model_id = :modelId AND l.channel = :channel AND l.board IN (:boards)
        AND l.status = :enrolled AND l.retired_at IS NULL`,
    { type: QueryTypes.SELECT, replacements: { releaseId: release.id, modelId: release.modelId, channel: release.channel, boards: release.boards, enrolled: ENROLLED } },
  );
  const older = rows.filter((r) => r.firmware !== null && semver.valid(r.firmware) !== null && semver.lt(r.firmware, release.version));
  const reached = (percent: number) => older.filter((r) => r.pilot || r.bucket < shareThreshold(percent)).length;
  const eligibleNow = reached(release.share);
  const eligibleAtShare = reached(share);
  return { share, eligibleNow, eligibleAtShare, more: Math.max(0, eligibleAtShare - eligibleNow) };
}

// ─── Signatures gathered after the upload, and re-signing ───────────────────

async function insertSignature(sequelize: Sequelize, t: Transaction, releaseId: string, signingKeyId: string, signature: Buffer, now: Date, by: string): Promise<boolean> {
  const [, count] = await sequelize.query(
    `INSERT INTO release_signatures (release_id, signing_key_id, signature, added_at, added_by) VALUES (:releaseId, :signingKeyId, :signature, :now, :by)
     ON CONFLICT DO NOTHING`,
    { transaction: t, replacements: { releaseId, signingKeyId, signature, now: now.toISOString(), by } },
  );
  return Number(count) > 0;
}

/** One signature over exactly `manifest` by the named key, which must be active; 400/422 otherwise. */
async function checkSignature(manifest: Buffer, input: SignatureRequest, path: string, t?: Transaction): Promise<{ key: SigningKey; signature: Buffer }> {
  const key = await SigningKey.findOne({ where: { keyId: input.keyId }, transaction: t });
  if (!key) throw refuse(`${path}keyId`, `No signing key with key id ${input.keyId} is registered: an admin registers its public key under Signing keys first.`);
  if (key.state !== 'active') {
    const why = key.state === 'revoked' ? 'signatures by a revoked key are refused' : 'a retired key signs nothing new';
    throw refuse(`${path}keyId`, `Key "${key.name}" (key id ${key.keyId}) is ${key.state}: ${why}.`);
  }
  if (key.algorithm !== input.algorithm) throw refuse(`${path}algorithm`, `Key ${key.keyId} signs with ${key.algorithm}, not ${input.algorithm}.`);
  let signature: Buffer;
  try {
    signature = decodeSignature(input.signature, key.algorithm);
  } catch (error) {
    if (error instanceof ManifestError) throw problems.badRequest(`The signature cannot be used: ${error.message}.`, [{ path: `${path}signature`, message: error.message }]);
    throw error;
  }
  if (!verifyManifestSignature(manifest, signature, parsePublicKeyPem(key.publicKeyPem))) {
    throw refuse(`${path}signature`, `The signature does not verify with key ${key.keyId} over this release's manifest: sign the manifest file that was uploaded, byte for byte.`);
  }
  return { key, signature };
}

/** POST /api/releases/:id/signatures: a draft gathers one more signature; a second by the same key counts once. */
export async function addReleaseSignature(deps: ReleaseDeps, ctx: RequestContext, id: string, input: AddSignatureRequest) {
  const release = await deps.sequelize.transaction(async (t) => {
    const found = await lockedRelease(t, id);
    if (found.state !== 'draft') {
      throw problems.conflict(`Signatures are gathered while the release is a draft; this release is ${found.state}. To sign it anew, re-sign its manifest.`, { allowedActions: [] });
    }
    const manifest = (await Release.findByPk(id, { transaction: t, attributes: ['manifest'] }))!.manifest;
    const { key, signature } = await checkSignature(manifest, input, '', t);
    const added = await insertSignature(deps.sequelize, t, id, key.id, signature, deps.now(), ctx.actor.name);
    await recordActivity(t, ctx, {
      action: 'release.signature_added',
      targetType: 'release',
      targetId: id,
      summary: added
        ? `${ctx.actor.name} added key ${key.keyId}'s signature ("${key.name}") to ${label(found, await modelName(found.modelId, t))}`
        : `${ctx.actor.name} sent key ${key.keyId}'s signature again for ${label(found, await modelName(found.modelId, t))}; it counts once`,
      details: { keyId: key.keyId, counted: added },
    });
    return found;
  });
  return presentRelease(deps.sequelize, (await Release.findByPk(release.id))!);
}

/**
 * PUT /api/releases/:id/manifest: a new manifest over the same image and version — the same fields but
 * `issued_at` and a later `expires` — with new signatures. The release keeps its id, history, targeting
 * and cohort; its signatures are replaced. A release that left draft must meet its signing rule at once,
 * since loggers verify what the offer carries.
 */
export async function resignRelease(deps: ReleaseDeps, ctx: RequestContext, id: string, input: ResignRequest) {
  const now = deps.now();
  const bytes = Buffer.from(input.manifest, 'utf8');
  let manifest: Manifest;
  try {
    manifest = parseSignedManifest(bytes);
  } catch (error) {
    if (error instanceof ManifestError) throw manifestProblem(error);
    throw error;
  }
  checkExpiry(manifest, now);
  await deps.sequelize.transaction(async (t) => {
    const found = await lockedRelease(t, id);
    const before = parseSignedManifest((await Release.findByPk(id, { transaction: t, attributes: ['manifest'] }))!.manifest);
    const kept = ['board_revisions', 'format', 'image_sha256', 'image_size', 'model', 'security_counter', 'version'] as const;
    const changed = kept.filter((f) => JSON.stringify(before[f]) !== JSON.stringify(manifest[f]));
    if (changed.length) {
      throw refuse(`manifest.${changed[0]}`, `A new manifest for this release keeps its image and version: ${changed.join(', ')} differ${changed.length === 1 ? 's' : ''}. Upload a new release instead.`);
    }
    if (!manifest.expires) throw refuse('manifest.expires', 'A new manifest for a release carries an expiry (expires), later than the one it replaces.');
    if (before.expires && Date.parse(manifest.expires) <= Date.parse(before.expires)) {
      throw refuse('manifest.expires', `The new manifest expires at ${manifest.expires}, not later than the one it replaces (${before.expires}).`);
    }
    const signers: { key: SigningKey; signature: Buffer }[] = [];
    for (const [i, s] of input.signatures.entries()) {
      const signer = await checkSignature(bytes, s, `signatures.${i}.`, t);
      if (!signers.some((x) => x.key.id === signer.key.id)) signers.push(signer);
    }
    const model = await LoggerModel.findByPk(found.modelId, { transaction: t, attributes: ['name', 'signingThreshold'] });
    if (found.state !== 'draft' && signers.length < (model?.signingThreshold ?? 1)) {
      throw refuse('signatures', `This release is ${found.state}: its new manifest needs signatures by ${model?.signingThreshold} distinct active keys at once (it has ${signers.length}), since loggers verify what the offer carries.`);
    }
    found.set('manifest', bytes);
    found.set('signature', signers[0].signature);
    found.signingKeyId = signers[0].key.id;
    found.expiresAt = new Date(manifest.expires);
    found.updatedAt = now;
    await found.save({ transaction: t });
    await deps.sequelize.query('DELETE FROM release_signatures WHERE release_id = :id', { transaction: t, replacements: { id } });
    for (const s of signers) await insertSignature(deps.sequelize, t, id, s.key.id, s.signature, now, ctx.actor.name);
    await recordActivity(t, ctx, {
      action: 'release.resigned',
      targetType: 'release',
      targetId: id,
      summary: `${ctx.actor.name} signed ${label(found, model?.name ?? 'model')} anew, expiring ${manifest.expires} (keys ${signers.map((s) => s.key.keyId).join(', ')})`,
      details: { expires: manifest.expires, previousExpires: before.expires ?? null, keyIds: signers.map((s) => s.key.keyId) },
    });
  });
  return presentRelease(deps.sequelize, (await Release.findByPk(id))!);
}
