// The firmware store: images named by their SHA-256. `ImageStore` is the seam between the two backends:
// `LocalImageStore` keeps images on local disk (the default), `S3ImageStore` (s3-store.ts) in
// S3-compatible object storage; server/images/select.ts picks one from the settings.
//
// An upload streams into a temporary file INSIDE the store directory (so the final rename is atomic on
// the same file system) while hashing and counting bytes, is flushed to disk, and only after every
// check passed is it renamed to `<sha256>`. A refused, failed or interrupted upload removes its
// temporary file.
import crypto from 'node:crypto';
import fs from 'node:fs';
import fsp from 'node:fs/promises';
import path from 'node:path';
import { Transform, type Readable } from 'node:stream';
import { pipeline } from 'node:stream/promises';

/** A fully received upload, not yet in the store. */
export type ReceivedImage = {
  sha256: string;
  size: number;
  /** Moves the bytes to `<sha256>`; false when the store already had that image (the copy is dropped). */
  commit(): Promise<boolean>;
  /** Drops the received bytes; safe to call at any time, also after commit (then it does nothing). */
  discard(): Promise<void>;
};

/** An upload in progress. */
export type IncomingImage = {
  /** Settles once the source has ended and the bytes are durable, or rejects (nothing is kept then). */
  done: Promise<ReceivedImage>;
  /** Stops receiving and removes whatever was written. */
  abort(): Promise<void>;
};

export interface ImageStore {
  readonly kind: 'local' | 's3';
  receive(source: Readable): IncomingImage;
  /** Size in bytes, or null when the store has no such image. */
  sizeOf(sha256: string): Promise<number | null>;
  /** Reads an image, optionally the inclusive byte range [start, end]. */
  read(sha256: string, range?: { start: number; end: number }): Readable;
  /** Removes an image; missing is fine. */
  remove(sha256: string): Promise<void>;
  /**
   * A short-lived URL the image can be fetched from without Heliodor (object storage); absent when the
   * store has none, and loggers download through the device API instead.
   */
  presignedUrl?(sha256: string): Promise<string>;
  /** Where the images are, for people (a folder, or s3://bucket/prefix). */
  describe(): string;
}

const digestPattern = /^[0-9a-f]{64}$/;
/** Names of uploads in progress: hidden, and never a digest. */
const incomingPrefix = '.incoming-';

function assertDigest(sha256: string) {
  if (!digestPattern.test(sha256)) throw new Error(`not an image digest: ${sha256}`);
}

async function unlinkQuietly(file: string) {
  await fsp.unlink(file).catch((error: NodeJS.ErrnoException) => {
    if (error.code !== 'ENOENT') throw error;
  });
}

export class LocalImageStore implements ImageStore {
  readonly kind = 'local' as const;
  constructor(readonly dir: string) {
    fs.mkdirSync(dir, { recursive: true });
  }

  describe(): string {
    return this.dir;
  }

  private pathOf(sha256: string) {
    assertDigest(sha256);
    return path.join(this.dir, sha256);
  }

  receive(source: Readable): IncomingImage {
    const temp = path.join(this.dir, `${incomingPrefix}${crypto.randomBytes(12).toString('hex')}`);
    const hash = crypto.createHash('sha256');
    let size = 0;
    let aborted = false;
    let committed = false;
    const out = fs.createWriteStream(temp, { flags: 'wx', mode: 0o640 });
    const counter = new Transform({
      transform(chunk: Buffer, _encoding, callback) {
        hash.update(chunk);
        size += chunk.length;
        callback(null, chunk);
      },
    });

    const discard = async () => {
      if (!committed) await unlinkQuietly(temp);
    };

    const done = (async (): Promise<ReceivedImage> => {
      try {
        await pipeline(source, counter, out);
        if (aborted) throw new Error('upload aborted');
        // Flush to disk before anyone relies on the bytes (a crash after the rename must not leave a torn image).
        const handle = await fsp.open(temp, 'r+');
        try {
          await handle.sync();
        } finally {
          await handle.close();
        }
      } catch (error) {
        await unlinkQuietly(temp);
        throw error;
      }
      const sha256 = hash.digest('hex');
      return {
        sha256,
        size,
        commit: async () => {
          if (aborted) throw new Error('upload aborted');
          const target = this.pathOf(sha256);
          const existed = await fsp.stat(target).then(
            () => true,
            () => false,
          );
          if (existed) {
            await unlinkQuietly(temp);
            committed = true;
            return false;
          }
          await fsp.rename(temp, target);
          committed = true;
          await this.syncDir();
          return true;
        },
        discard,
      };
    })();
    // Callers may never await `done` when the request fails first: keep the rejection handled.
    done.catch(() => undefined);

    return {
      done,
      abort: async () => {
        aborted = true;
        out.destroy();
        source.unpipe?.(counter);
        await done.then(
          () => undefined,
          () => undefined,
        );
        await discard();
      },
    };
  }

  /** Makes a rename durable (the directory entry), where the platform allows it. */
  private async syncDir() {
    const handle = await fsp.open(this.dir, 'r').catch(() => null);
    if (!handle) return;
    try {
      await handle.sync();
    } catch {
      // Some file systems refuse fsync on a directory; the rename itself already happened.
    } finally {
      await handle.close();
    }
  }

  async sizeOf(sha256: string): Promise<number | null> {
    try {
      return (await fsp.stat(this.pathOf(sha256))).size;
    } catch (error) {
      if ((error as NodeJS.ErrnoException).code === 'ENOENT') return null;
      throw error;
    }
  }

  read(sha256: string, range?: { start: number; end: number }): Readable {
    return fs.createReadStream(this.pathOf(sha256), range ? { start: range.start, end: range.end } : undefined);
  }

  async remove(sha256: string): Promise<void> {
    await unlinkQuietly(this.pathOf(sha256));
  }

  /**
   * Removes the temporary files of uploads that never finished: a process that dies mid-upload (a crash,
   * kill -9, power loss) cannot remove its own. Run at start, before this process receives anything, so
   * every `.incoming-*` file found belongs to an upload that is over. Answers the names removed.
   */
  async sweepIncoming(): Promise<string[]> {
    const names = (await fsp.readdir(this.dir)).filter((name) => name.startsWith(incomingPrefix));
    for (const name of names) await unlinkQuietly(path.join(this.dir, name));
    if (names.length) await this.syncDir();
    return names;
  }
}
