// GET /api/device/v1/images/{sha256} (DEVICE_API.md; RFC 9110 §14 ranges, §13.1.5 If-Range).
// The id is checked before anything else is touched; the image is served only to a logger that was
// offered it by a release that is still live; bytes are streamed from the image store (the local
// folder, or object storage when offers carry presigned URLs and a logger still asks here), never read
// whole into memory.
import path from 'node:path';
import type { Request, Response } from 'express';
import type { ImageStore } from '../images/store';
import type { Sequelize } from 'sequelize';
import { QueryTypes } from 'sequelize';
import { imageIdPattern } from '../../schemas/device';
import { LIVE_STATES } from '../../schemas/words';
import { Problem, problems } from '../http/problem';
import { contentRange, ifRangeMatches, imageEtag, parseRange, unsatisfiedRange } from './ranges';

/** Where the store keeps an image: a file named by its SHA-256 (DEVELOPERS.md, firmware-store/). */
export function imagePath(storeDir: string, sha256: string): string {
  return path.join(storeDir, sha256);
}

const notFound = () => problems.notFound('image', 'No such image for this logger.');

/** Whether this logger was offered the image by a release in a live state (a report alone is no offer). */
export async function mayDownload(sequelize: Sequelize, loggerId: string, sha256: string): Promise<{ size: number } | null> {
  const rows = await sequelize.query<{ size: number }>(
    `SELECT i.size FROM install_reports ir JOIN releases r ON r.id = ir.release_id JOIN images i ON i.sha256 = r.image_sha256
      WHERE ir.logger_id = :loggerId AND ir.offered_at IS NOT NULL AND r.image_sha256 = :sha256
        AND r.state IN (:liveStates) LIMIT 1`,
    { type: QueryTypes.SELECT, replacements: { loggerId, sha256, liveStates: [...LIVE_STATES] } },
  );
  return rows[0] ? { size: Number(rows[0].size) } : null;
}

export function isImageId(id: unknown): id is string {
  return typeof id === 'string' && imageIdPattern.test(id);
}

export async function serveImage(
  req: Request,
  res: Response,
  deps: { sequelize: Sequelize; store: ImageStore; loggerId: string; sha256: string },
): Promise<void> {
  const allowed = await mayDownload(deps.sequelize, deps.loggerId, deps.sha256);
  if (!allowed) throw notFound();
  const size = await deps.store.sizeOf(deps.sha256);
  if (size === null) {
    req.log?.error({ sha256: deps.sha256 }, 'image listed for a live release is missing from the store');
    throw notFound();
  }

  const etag = imageEtag(deps.sha256);
  res.setHeader('Accept-Ranges', 'bytes');
  res.setHeader('ETag', etag);
  res.setHeader('Cache-Control', 'private, no-transform');
  res.setHeader('Content-Type', 'application/octet-stream');

  // Range is defined for GET only: on any other method (HEAD included) it is ignored (RFC 9110 §14.2,
  // docs/SOURCES.md §10). If-Range with another validator: the whole image (RFC 9110 §13.1.5).
  const honoured = req.method === 'GET' && ifRangeMatches(req.get('if-range'), etag);
  const range = honoured ? parseRange(req.get('range'), size) : { kind: 'none' as const };
  if (range.kind === 'unsatisfiable') {
    throw new Problem(416, 'range-not-satisfiable', 'Range not satisfiable', `The image has ${size} bytes; ask for a range that starts below that.`, {
      headers: { 'Content-Range': unsatisfiedRange(size) },
    });
  }
  let start = 0;
  let end = size - 1;
  if (range.kind === 'single') {
    start = range.start;
    end = range.end;
    res.status(206).setHeader('Content-Range', contentRange(start, end, size));
  } else {
    res.status(200);
  }
  const length = size === 0 ? 0 : end - start + 1;
  res.setHeader('Content-Length', String(length));
  if (req.method === 'HEAD' || length === 0) {
    res.end();
    return;
  }
  await new Promise<void>((resolve) => {
    const stream = deps.store.read(deps.sha256, { start, end });
    stream.on('error', (err) => {
      req.log?.error({ err, sha256: deps.sha256 }, 'image read failed');
      res.destroy(err);
      resolve();
    });
    res.on('close', () => {
      stream.destroy();
      resolve();
    });
    stream.pipe(res);
  });
}
