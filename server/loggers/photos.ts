// The install photo: one JPEG or PNG per logger, ≤ 10 MB, recognised by its first bytes (the file name and the
// declared type are the sender's claim, not the content). Stored in logger_photos (migration 0005) with its
// metadata in loggers.install, both in one transaction.
import crypto from 'node:crypto';
import { QueryTypes } from 'sequelize';
import { recordActivity } from '../activity/service';
import { problems } from '../http/problem';
import type { Actor, RequestContext } from '../auth/actor';
import { loggerFor, type RegistryDeps } from './service';
import type { StoredInstall } from './present';

export const PHOTO_LIMIT_BYTES = 10 * 1024 * 1024;

export type PhotoType = 'image/jpeg' | 'image/png';

/** JPEG starts with an SOI marker and another marker (FF D8 FF); PNG with its 8-byte signature (W3C PNG §5.2). */
export function photoTypeOf(bytes: Uint8Array): PhotoType | null {
  if (bytes.length >= 3 && bytes[0] === 0xff && bytes[1] === 0xd8 && bytes[2] === 0xff) return 'image/jpeg';
  const png = [0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a];
  if (bytes.length >= png.length && png.every((b, i) => bytes[i] === b)) return 'image/png';
  return null;
}

export async function savePhoto(deps: RegistryDeps, ctx: RequestContext, id: string, bytes: Buffer): Promise<void> {
  const type = photoTypeOf(bytes);
  if (!type) {
    throw problems.badRequest('The photo must be a JPEG or PNG image; this file is neither.', [{ path: 'photo', message: 'must be a JPEG or PNG image' }]);
  }
  if (bytes.length > PHOTO_LIMIT_BYTES) throw problems.tooLarge('The photo is larger than 10 MB.');
  await deps.sequelize.transaction(async (transaction) => {
    const logger = await loggerFor(ctx.actor, id, transaction, 'addPhoto');
    if (logger.status === 'retired') throw problems.conflict(`Logger ${logger.serial} is retired.`);
    const sha256 = crypto.createHash('sha256').update(bytes).digest('hex');
    const uploadedAt = deps.now();
    await deps.sequelize.query(
      `INSERT INTO logger_photos (logger_id, content_type, bytes, size, sha256, uploaded_by, uploaded_at)
       VALUES ($1, $2, $3, $4, $5, $6, $7)
       ON CONFLICT (logger_id) DO UPDATE SET content_type = EXCLUDED.content_type, bytes = EXCLUDED.bytes, size = EXCLUDED.size,
         sha256 = EXCLUDED.sha256, uploaded_by = EXCLUDED.uploaded_by, uploaded_at = EXCLUDED.uploaded_at`,
      { bind: [logger.id, type, bytes, bytes.length, sha256, ctx.actor.type === 'person' ? ctx.actor.id : null, uploadedAt], transaction },
    );
    const install: StoredInstall = { ...((logger.install as StoredInstall | null) ?? {}), photo: { contentType: type, size: bytes.length, sha256, uploadedAt: uploadedAt.toISOString() } };
    await logger.update({ install }, { transaction });
    await recordActivity(transaction, ctx, {
      action: 'logger.photo_added',
      targetType: 'logger',
      targetId: logger.id,
      summary: `Install photo of logger ${logger.serial} added (${type === 'image/png' ? 'PNG' : 'JPEG'}, ${Math.ceil(bytes.length / 1024)} KB)`,
      details: { sha256, size: bytes.length },
    });
  });
}

export async function readPhoto(deps: RegistryDeps, actor: Actor, id: string): Promise<{ contentType: PhotoType; bytes: Buffer; sha256: string }> {
  await loggerFor(actor, id);
  const rows = await deps.sequelize.query<{ content_type: PhotoType; bytes: Buffer; sha256: string }>(
    'SELECT content_type, bytes, sha256 FROM logger_photos WHERE logger_id = $1',
    { bind: [id], type: QueryTypes.SELECT },
  );
  if (rows.length === 0) throw problems.notFound('photo', 'This logger has no install photo yet.');
  return { contentType: rows[0].content_type, bytes: rows[0].bytes, sha256: rows[0].sha256.trim() };
}
