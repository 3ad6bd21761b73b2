// Multipart intake for POST /api/releases: a multer storage engine that streams the `image` part
// into the firmware store (hashing as it goes) and keeps the small `manifest` and `signature` file
// parts in memory. Whatever multer gives up on (a limit, a truncated body, a dropped connection)
// is removed through `_removeFile`.
import type { Request, RequestHandler } from 'express';
import multer, { type StorageEngine } from 'multer';
import { problems } from '../http/problem';
import type { ImageStore, ReceivedImage } from './store';

/** Manifest and signature are a few hundred bytes; anything this large is not one. */
export const smallPartLimitBytes = 64 * 1024;
/** Notes may be long (20 000 characters of UTF-8); text fields are capped a little above that. */
const fieldSizeLimitBytes = 128 * 1024;

export const uploadFileParts = ['image', 'manifest', 'signature'] as const;

type IntakeFile = Express.Multer.File & { received?: ReceivedImage; buffer?: Buffer; abortUpload?: () => Promise<void> };

class ReleaseUploadStorage implements StorageEngine {
  constructor(private readonly store: ImageStore) {}

  _handleFile(_req: Request, file: IntakeFile, callback: (error?: unknown, info?: Partial<IntakeFile>) => void): void {
    if (file.fieldname === 'image') {
      const incoming = this.store.receive(file.stream);
      // Set before any byte arrives so that multer's abort cleanup knows this file needs removing.
      file.path = 'incoming';
      file.abortUpload = incoming.abort;
      incoming.done.then(
        (received) => callback(null, { received, size: received.size, abortUpload: incoming.abort }),
        (error) => callback(error),
      );
      return;
    }
    const chunks: Buffer[] = [];
    let size = 0;
    let refused = false;
    file.stream.on('data', (chunk: Buffer) => {
      if (refused) return;
      size += chunk.length;
      if (size > smallPartLimitBytes) {
        refused = true;
        file.stream.resume();
        callback(
          problems.badRequest(`The ${file.fieldname} part is larger than ${smallPartLimitBytes / 1024} KiB: it cannot be a ${file.fieldname}.`, [
            { path: file.fieldname, message: `larger than ${smallPartLimitBytes / 1024} KiB` },
          ]),
        );
        return;
      }
      chunks.push(chunk);
    });
    file.stream.on('error', (error) => {
      if (!refused) callback(error);
      refused = true;
    });
    file.stream.on('end', () => {
      if (!refused) callback(null, { buffer: Buffer.concat(chunks), size });
    });
  }

  _removeFile(_req: Request, file: IntakeFile, callback: (error: Error | null) => void): void {
    if (!file.abortUpload) return callback(null);
    file.abortUpload().then(
      () => callback(null),
      (error: Error) => callback(error),
    );
  }
}

/** The parts of a release upload once multer is through. */
export type UploadParts = {
  image: ReceivedImage | null;
  /** The manifest's exact bytes (file part, or text field as UTF-8). */
  manifest: Buffer | null;
  /** Every signature sent: a `signature` file part, or one or more `signature` text fields (one per key). */
  signatures: string[];
  fields: Record<string, unknown>;
};

/** The most signatures one upload may carry (the largest signing rule is 16 keys). */
export const maxUploadSignatures = 16;

export function releaseUploadMiddleware(store: ImageStore, imageLimitBytes: number): RequestHandler {
  return multer({
    storage: new ReleaseUploadStorage(store),
    limits: { fileSize: imageLimitBytes, files: 3, fields: 8 + maxUploadSignatures, parts: 11 + maxUploadSignatures, fieldSize: fieldSizeLimitBytes, fieldNameSize: 100, headerPairs: 100 },
  }).fields(uploadFileParts.map((name) => ({ name, maxCount: 1 })));
}

/** Collects the parts; throws 400 naming the part when one is missing or sent twice (file and field). */
export function uploadPartsOf(req: Request): UploadParts {
  const files = (req.files ?? {}) as Record<string, IntakeFile[] | undefined>;
  const body = (req.body ?? {}) as Record<string, unknown>;
  const image = files.image?.[0]?.received ?? null;
  const manifestFile = files.manifest?.[0]?.buffer ?? null;
  const manifestField = body.manifest;
  if (manifestFile && manifestField !== undefined) {
    throw problems.badRequest('Send the manifest once: as a file part or as a text field, not both.', [{ path: 'manifest', message: 'sent twice' }]);
  }
  if (manifestField !== undefined && typeof manifestField !== 'string') {
    throw problems.badRequest('Send the manifest once.', [{ path: 'manifest', message: 'sent more than once' }]);
  }
  const manifest = manifestFile ?? (typeof manifestField === 'string' ? Buffer.from(manifestField, 'utf8') : null);
  // Signatures: a file part (one), and any number of text fields (one per signing key).
  const signatureField = body.signature;
  const signatureTexts = signatureField === undefined ? [] : Array.isArray(signatureField) ? signatureField : [signatureField];
  if (signatureTexts.some((v) => typeof v !== 'string')) {
    throw problems.badRequest('Each signature is base64 text.', [{ path: 'signature', message: 'must be text' }]);
  }
  const signatures = [...(files.signature?.[0]?.buffer ? [files.signature[0].buffer.toString('utf8')] : []), ...(signatureTexts as string[])];
  if (signatures.length > maxUploadSignatures) {
    throw problems.badRequest(`At most ${maxUploadSignatures} signatures come with one upload.`, [{ path: 'signature', message: `more than ${maxUploadSignatures}` }]);
  }
  const fields: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(body)) if (k !== 'manifest' && k !== 'signature') fields[k] = v;
  return { image, manifest, signatures, fields };
}
