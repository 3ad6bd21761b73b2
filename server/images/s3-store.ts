// The firmware store in S3-compatible object storage (HELIODOR_IMAGE_STORE=s3; DEVELOPERS.md "Image
// store"): each image is one object named by its SHA-256 (under an optional key prefix), written once
// and never changed. Talks to the store through the AWS SDK v3 (@aws-sdk/client-s3); offers carry a
// short-lived presigned GET URL (@aws-sdk/s3-request-presigner, AWS Signature Version 4 in the query
// string), so loggers fetch the bytes — ranges included — from the object store, not through Heliodor.
//
// An upload is spooled to a temporary folder of its own on local disk while it is hashed and counted
// (the object's name is its digest, known only at the end), then put as one object with its length and
// removed locally. A refused, failed or interrupted upload leaves nothing in the bucket.
import fs from 'node:fs';
import fsp from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { PassThrough, type Readable } from 'node:stream';
import {
  DeleteObjectCommand,
  GetObjectCommand,
  HeadObjectCommand,
  PutObjectCommand,
  S3Client,
  type S3ClientConfig,
} from '@aws-sdk/client-s3';
import { getSignedUrl } from '@aws-sdk/s3-request-presigner';
import { LocalImageStore, type ImageStore, type IncomingImage, type ReceivedImage } from './store';

export type S3StoreSettings = {
  bucket: string;
  /** Key prefix, e.g. "firmware/"; empty for the bucket's root. */
  prefix: string;
  region: string;
  /** An S3-compatible endpoint (e.g. http://127.0.0.1:9000); absent for AWS itself. */
  endpoint?: string;
  /** Path-style URLs (http://host/bucket/key), which most S3-compatible servers need. */
  forcePathStyle: boolean;
  /** Absent: the SDK's own credential chain (environment, shared files, instance role). */
  credentials?: { accessKeyId: string; secretAccessKey: string };
  /** How long a presigned URL in an offer stays valid, seconds. */
  urlTtlS: number;
  /** Where uploads are spooled while they are hashed (default: the system's temporary folder). */
  spoolDir?: string;
};

const digestPattern = /^[0-9a-f]{64}$/;

function assertDigest(sha256: string) {
  if (!digestPattern.test(sha256)) throw new Error(`not an image digest: ${sha256}`);
}

function isNotFound(error: unknown): boolean {
  const e = error as { name?: string; $metadata?: { httpStatusCode?: number } };
  return e?.name === 'NotFound' || e?.name === 'NoSuchKey' || e?.$metadata?.httpStatusCode === 404;
}

export class S3ImageStore implements ImageStore {
  readonly kind = 's3' as const;
  readonly client: S3Client;
  private readonly spoolRoot: string;
  /** Presigned URLs by digest, reused for a third of their lifetime (so an offered URL has at least two thirds left). */
  private readonly urls = new Map<string, { url: string; until: number }>();

  constructor(readonly settings: S3StoreSettings) {
    const config: S3ClientConfig = {
      region: settings.region,
      forcePathStyle: settings.forcePathStyle,
      // Checksums only where the API requires them: with the SDK's default, a streamed body is sent
      // aws-chunked with a trailing checksum, which S3-compatible servers do not all understand (one
      // stored the chunk framing as part of the image).
      requestChecksumCalculation: 'WHEN_REQUIRED',
      responseChecksumValidation: 'WHEN_REQUIRED',
      ...(settings.endpoint ? { endpoint: settings.endpoint } : {}),
      ...(settings.credentials ? { credentials: settings.credentials } : {}),
    };
    this.client = new S3Client(config);
    this.spoolRoot = settings.spoolDir ?? os.tmpdir();
    fs.mkdirSync(this.spoolRoot, { recursive: true });
  }

  /** Where the image lives, for people: s3://bucket/prefix<sha256>. */
  describe(): string {
    return `s3://${this.settings.bucket}/${this.settings.prefix}`;
  }

  private keyOf(sha256: string): string {
    assertDigest(sha256);
    return `${this.settings.prefix}${sha256}`;
  }

  receive(source: Readable): IncomingImage {
    const dir = fs.mkdtempSync(path.join(this.spoolRoot, 'heliodor-upload-'));
    const spool = new LocalImageStore(dir);
    const incoming = spool.receive(source);
    const cleanUp = () => fsp.rm(dir, { recursive: true, force: true });
    let committed = false;
    const done = (async (): Promise<ReceivedImage> => {
      let received: ReceivedImage;
      try {
        received = await incoming.done;
      } catch (error) {
        await cleanUp();
        throw error;
      }
      return {
        sha256: received.sha256,
        size: received.size,
        commit: async () => {
          if (committed) return false;
          try {
            if ((await this.sizeOf(received.sha256)) !== null) {
              committed = true;
              return false;
            }
            await received.commit();
            const file = path.join(dir, received.sha256);
            await this.client.send(
              new PutObjectCommand({
                Bucket: this.settings.bucket,
                Key: this.keyOf(received.sha256),
                Body: fs.createReadStream(file),
                ContentLength: received.size,
                ContentType: 'application/octet-stream',
              }),
            );
            committed = true;
            return true;
          } finally {
            await cleanUp();
          }
        },
        discard: async () => {
          await received.discard().catch(() => undefined);
          await cleanUp();
        },
      };
    })();
    done.catch(() => undefined);
    return {
      done,
      abort: async () => {
        await incoming.abort();
        await cleanUp();
      },
    };
  }

  async sizeOf(sha256: string): Promise<number | null> {
    try {
      const head = await this.client.send(new HeadObjectCommand({ Bucket: this.settings.bucket, Key: this.keyOf(sha256) }));
      return Number(head.ContentLength ?? 0);
    } catch (error) {
      if (isNotFound(error)) return null;
      throw error;
    }
  }

  read(sha256: string, range?: { start: number; end: number }): Readable {
    const out = new PassThrough();
    const key = this.keyOf(sha256);
    this.client
      .send(new GetObjectCommand({ Bucket: this.settings.bucket, Key: key, ...(range ? { Range: `bytes=${range.start}-${range.end}` } : {}) }))
      .then((object) => {
        const body = object.Body as Readable | undefined;
        if (!body) throw new Error(`object ${key} has no body`);
        body.on('error', (err) => out.destroy(err));
        out.on('close', () => body.destroy());
        body.pipe(out);
      })
      .catch((err: Error) => out.destroy(err));
    return out;
  }

  async remove(sha256: string): Promise<void> {
    this.urls.delete(sha256);
    await this.client.send(new DeleteObjectCommand({ Bucket: this.settings.bucket, Key: this.keyOf(sha256) }));
  }

  /**
   * A presigned GET URL for the image, valid for `urlTtlS` seconds from when it was made. Signing is
   * local (no request to the store); a URL is reused for a third of its lifetime, so the check-ins of a
   * busy fleet share one signature per image and a logger always gets at least two thirds of the lifetime.
   */
  async presignedUrl(sha256: string, now = Date.now()): Promise<string> {
    const cached = this.urls.get(sha256);
    if (cached && now < cached.until) return cached.url;
    const url = await getSignedUrl(this.client, new GetObjectCommand({ Bucket: this.settings.bucket, Key: this.keyOf(sha256) }), {
      expiresIn: this.settings.urlTtlS,
    });
    this.urls.set(sha256, { url, until: now + (this.settings.urlTtlS * 1000) / 3 });
    return url;
  }

  /** Nothing is spooled between runs (each upload's folder goes with it); here for the interface's sake. */
  async sweepIncoming(): Promise<string[]> {
    return [];
  }

  stop(): void {
    this.client.destroy();
  }
}
