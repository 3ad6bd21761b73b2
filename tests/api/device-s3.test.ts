// Images in S3-compatible object storage (server/images/s3-store.ts; DEVICE_API.md "Image download"):
// a release uploaded through the console lands in the bucket under its SHA-256, and a check-in's offer
// carries a presigned URL the logger fetches directly. The object store is s3rver, a local fake S3 server
// on loopback (never the network). Checks against sources outside Heliodor: digests by node:crypto
// SHA-256 (FIPS 180-4); byte ranges per RFC 9110 §14 (206 Partial Content, Content-Range); the signed
// URL is AWS Signature Version 4 in the query string, which s3rver verifies with its own credentials.
import crypto from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import S3rver from 's3rver';
import { csrf, startTestApp, type TestApp } from '../helpers/app';
import { S3ImageStore } from '../../server/images/s3-store';
import { bearer, CHECK_IN, checkInBody, createFleet, type Fleet } from './device-fixtures';
import { keyPair, postUpload, registerKey, signedUpload } from './release-fixtures';

const BUCKET = 'heliodor-images';
let s3: S3rver;
let s3Dir: string;
let store: S3ImageStore;
let t: TestApp;
let fleet: Fleet;

beforeAll(async () => {
  s3Dir = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-s3-'));
  s3 = new S3rver({ address: '127.0.0.1', port: 0, silent: true, directory: s3Dir, configureBuckets: [{ name: BUCKET, configs: [] }] });
  const { port } = (await s3.run()) as { port: number };
  store = new S3ImageStore({
    bucket: BUCKET,
    prefix: 'firmware/',
    region: 'us-east-1',
    endpoint: `http://127.0.0.1:${port}`,
    forcePathStyle: true,
    // s3rver's own fixed credentials (its README); they sign and verify, nothing more.
    credentials: { accessKeyId: 'S3RVER', secretAccessKey: 'S3RVER' },
    urlTtlS: 900,
  });
  t = await startTestApp({ images: store });
  fleet = await createFleet(t);
});
afterAll(async () => {
  await t?.close();
  store?.stop();
  await s3?.close();
  fs.rmSync(s3Dir, { recursive: true, force: true });
});

const sha256Of = (bytes: Buffer | Uint8Array) => crypto.createHash('sha256').update(bytes).digest('hex');

test('when a release is uploaded and offered, then the check-in carries a presigned URL that returns the exact bytes, and a Range request returns 206 with that slice', async () => {
  const key = keyPair('ed25519');
  await registerKey(t, key);
  const image = crypto.randomBytes(200_000 + 17);
  const engineer = await t.signedIn('release_engineer');
  const upload = signedUpload(key, { model: fleet.model.id, version: '2.4.0', boards: ['A', 'B', 'C'], counter: 1, image });
  const created = await postUpload(engineer.post('/api/releases').set(csrf), upload);
  expect(created.status).toBe(201);
  const sha256 = sha256Of(image);
  // In the bucket under its digest, not in the local folder.
  expect(await store.sizeOf(sha256)).toBe(image.length);
  expect(fs.readdirSync(t.storeDir)).toEqual([]);
  for (const step of [{ action: 'start_pilot' }, { action: 'complete' }]) {
    const res = await engineer.post(`/api/releases/${created.body.id}/transitions`).set(csrf).send(step);
    expect(res.status).toBe(200);
  }

  const lg = await fleet.logger();
  const checkIn = await t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('2.3.1'));
  expect(checkIn.status).toBe(200);
  const offered = checkIn.body.offer.image as { url: string; sha256: string; size: number };
  expect(offered.sha256).toBe(sha256);
  expect(offered.size).toBe(image.length);
  const url = new URL(offered.url);
  expect(url.hostname).toBe('127.0.0.1');
  expect(url.pathname).toBe(`/${BUCKET}/firmware/${sha256}`);
  // AWS Signature Version 4 query parameters, valid for the configured 900 s.
  expect(url.searchParams.get('X-Amz-Algorithm')).toBe('AWS4-HMAC-SHA256');
  expect(url.searchParams.get('X-Amz-Expires')).toBe('900');

  const whole = await fetch(offered.url);
  expect(whole.status).toBe(200);
  const bytes = Buffer.from(await whole.arrayBuffer());
  expect(bytes.length).toBe(image.length);
  expect(sha256Of(bytes)).toBe(sha256);

  // RFC 9110 §14.1.2: bytes=1000-1999 is the 1 000 bytes from offset 1000.
  const part = await fetch(offered.url, { headers: { Range: 'bytes=1000-1999' } });
  expect(part.status).toBe(206);
  expect(part.headers.get('content-range')).toBe(`bytes 1000-1999/${image.length}`);
  expect(Buffer.from(await part.arrayBuffer()).equals(image.subarray(1000, 2000))).toBe(true);

  // The device API's own download path still serves the image, from the bucket, ranges included.
  const viaServer = await t.request().get(`/api/device/v1/images/${sha256}`).set(bearer(lg.token)).set('Range', 'bytes=0-99').buffer(true).parse((res, done) => {
    const chunks: Buffer[] = [];
    res.on('data', (c: Buffer) => chunks.push(c));
    res.on('end', () => done(null, Buffer.concat(chunks)));
  });
  expect(viaServer.status).toBe(206);
  expect((viaServer.body as Buffer).equals(image.subarray(0, 100))).toBe(true);
});

test('when an URL is presigned twice within a third of its lifetime, then the same URL is reused; after that a new one is signed', async () => {
  const sha256 = 'a'.repeat(64);
  const first = await store.presignedUrl(sha256, 1_000_000);
  expect(await store.presignedUrl(sha256, 1_000_000 + 299_000)).toBe(first);
  // 900 s / 3 = 300 s: past it, a fresh signature (the SDK signs with the wall clock, so compare the object only).
  const later = await store.presignedUrl(sha256, 1_000_000 + 301_000);
  expect(new URL(later).pathname).toBe(new URL(first).pathname);
});
