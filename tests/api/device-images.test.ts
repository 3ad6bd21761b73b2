// GET /api/device/v1/images/{sha256}: who may download, and RFC 9110 range requests (§14.1.2 byte
// ranges, §14.4 Content-Range, §15.3.7 206, §15.5.17 416, §13.1.5 If-Range), checked with supertest
// and with a real client (curl resuming with `-C -`). Digests: FIPS 180-4 SHA-256 via node:crypto.
import crypto from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { execFile } from 'node:child_process';
import { promisify } from 'node:util';
import type { Response } from 'supertest';
import { startTestApp, type TestApp } from '../helpers/app';
import { bearer, checkInBody, createFleet, type Fleet } from './device-fixtures';
import { Release } from '../../server/db/models';

const run = promisify(execFile);

let t: TestApp;
let fleet: Fleet;
let release: Awaited<ReturnType<Fleet['release']>>;
let lg: Awaited<ReturnType<Fleet['logger']>>;
const image = crypto.randomBytes(400_000);
const sha = (b: Buffer) => crypto.createHash('sha256').update(b).digest('hex');

beforeAll(async () => {
  t = await startTestApp();
  fleet = await createFleet(t);
  release = await fleet.release({ version: '2.4.0', imageBytes: image });
  lg = await fleet.logger();
  const res = await t.request().post('/api/device/v1/check-in').set(bearer(lg.token)).send(checkInBody('2.3.1'));
  expect(res.body.offer?.image.sha256).toBe(release.sha256);
});
afterAll(() => t.close());

const url = () => `/api/device/v1/images/${release.sha256}`;
const binary = (res: Response, cb: (err: Error | null, body: Buffer) => void) => {
  const chunks: Buffer[] = [];
  res.on('data', (c: Buffer) => chunks.push(c));
  res.on('end', () => cb(null, Buffer.concat(chunks)));
};
const get = (headers: Record<string, string> = {}) =>
  t.request().get(url()).set(bearer(lg.token)).set(headers).buffer(true).parse(binary as never);

describe('image download', () => {
  test('when the offered logger asks without Range, then 200 with the whole image, Accept-Ranges, ETag and octet-stream', async () => {
    const res = await get();
    expect(res.status).toBe(200);
    expect(res.headers['accept-ranges']).toBe('bytes');
    expect(res.headers.etag).toBe(`"${release.sha256}"`);
    expect(res.headers['content-type']).toBe('application/octet-stream');
    expect(Number(res.headers['content-length'])).toBe(image.length);
    expect(sha(res.body as Buffer)).toBe(release.sha256);
  });

  test('when a single range is asked for, then 206 with exactly those bytes and Content-Range (RFC 9110 §14.1.2 examples)', async () => {
    const size = image.length;
    const cases: [string, number, number][] = [
      ['bytes=0-499', 0, 499], // "the first 500 bytes"
      ['bytes=500-999', 500, 999], // "the second 500 bytes"
      ['bytes=-500', size - 500, size - 1], // "the final 500 bytes"
      ['bytes=399000-', 399000, size - 1], // from an offset to the end
      ['bytes=399990-999999', 399990, size - 1], // last-pos past the end is clamped
    ];
    for (const [range, start, end] of cases) {
      const res = await get({ Range: range, 'If-Range': `"${release.sha256}"` });
      expect(res.status).toBe(206);
      expect(res.headers['content-range']).toBe(`bytes ${start}-${end}/${size}`);
      expect(Buffer.compare(res.body as Buffer, image.subarray(start, end + 1))).toBe(0);
    }
  });

  test('when HEAD is asked, then the same headers as GET and no body (RFC 9110 §9.3.2)', async () => {
    const res = await t.request().head(url()).set(bearer(lg.token));
    expect(res.status).toBe(200);
    expect(res.headers['content-length']).toBe(String(image.length));
    expect(res.headers['accept-ranges']).toBe('bytes');
    expect(res.headers.etag).toBe(`"${release.sha256}"`);
    expect(res.text ?? '').toBe('');
  });

  test('when HEAD carries a Range, then the Range is ignored: 200 with the whole Content-Length, never 206 or 416 (RFC 9110 §14.2, docs/SOURCES.md §10)', async () => {
    // §14.2: "A server MUST ignore a Range header field received with any other request method" than GET.
    for (const [range, ifRange] of [['bytes=10-19', `"${release.sha256}"`], ['bytes=10-19', undefined], [`bytes=${image.length}-`, undefined]] as const) {
      const req = t.request().head(url()).set(bearer(lg.token)).set('Range', range);
      const res = await (ifRange ? req.set('If-Range', ifRange) : req);
      expect(res.status).toBe(200);
      expect(res.headers['content-length']).toBe(String(image.length));
      expect(res.headers['content-range']).toBeUndefined();
      expect(res.text ?? '').toBe('');
    }
  });

  test('when the range starts past the end, then 416 with Content-Range bytes */size', async () => {
    const res = await get({ Range: `bytes=${image.length}-` });
    expect(res.status).toBe(416);
    expect(res.headers['content-range']).toBe(`bytes */${image.length}`);
  });

  test('when If-Range does not match, or several ranges are asked for, then the whole image with 200', async () => {
    const stale = await get({ Range: 'bytes=100-', 'If-Range': `"${'0'.repeat(64)}"` });
    expect(stale.status).toBe(200);
    expect(sha(stale.body as Buffer)).toBe(release.sha256);
    const weak = await get({ Range: 'bytes=100-', 'If-Range': `W/"${release.sha256}"` });
    expect(weak.status).toBe(200);
    const multi = await get({ Range: 'bytes=0-9,20-29' });
    expect(multi.status).toBe(200);
    expect(sha(multi.body as Buffer)).toBe(release.sha256);
  });

  test('when the id is not 64 lowercase hex characters, then 404', async () => {
    const ids = [release.sha256.toUpperCase(), release.sha256.slice(1), `${release.sha256}0`, 'g'.repeat(64), '..%2F..%2Fetc%2Fpasswd', `${release.sha256}.bin`];
    for (const id of ids) {
      const res = await t.request().get(`/api/device/v1/images/${id}`).set(bearer(lg.token));
      expect(res.status).toBe(404);
      expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
    }
  });

  test('when the logger was not offered the image, or the release is no longer live, then 404; without a token, 401', async () => {
    const other = await fleet.logger();
    expect((await t.request().get(url()).set(bearer(other.token))).status).toBe(404);
    expect((await t.request().get(`/api/device/v1/images/${'a'.repeat(64)}`).set(bearer(lg.token))).status).toBe(404);
    expect((await t.request().get(url())).status).toBe(401);

    const stopped = await fleet.release({ version: '2.5.0', boards: ['A'] });
    const onA = await fleet.logger({ board: 'A' });
    const offered = await t.request().post('/api/device/v1/check-in').set(bearer(onA.token)).send(checkInBody('2.3.1', { board: 'A' }));
    expect(offered.body.offer?.release).toBe(stopped.id);
    const img = `/api/device/v1/images/${stopped.sha256}`;
    expect((await t.request().get(img).set(bearer(onA.token))).status).toBe(200);
    await Release.update({ state: 'stopped', resumeState: 'complete' }, { where: { id: stopped.id } });
    expect((await t.request().get(img).set(bearer(onA.token))).status).toBe(404);
  });

  test('when curl stopped part-way resumes with -C -, then the file has the image SHA-256', async () => {
    const base = await t.listen();
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-curl-'));
    const out = path.join(dir, 'image.bin');
    const auth = `Authorization: Bearer ${lg.token}`;
    try {
      // The first transfer stops part-way: curl fetches only the first 150 000 bytes (--range), as a
      // dropped link would leave them.
      await run('curl', ['-sS', '-f', '--range', '0-149999', '-H', auth, '-o', out, `${base}${url()}`]);
      const partial = fs.statSync(out).size;
      expect(partial).toBe(150_000);
      // -C - asks for Range: bytes=<partial>- and appends (curl manual, --continue-at).
      const second = await run('curl', ['-sS', '-f', '-C', '-', '-H', auth, '-o', out, '-w', '%{http_code}', `${base}${url()}`]);
      expect(second.stdout).toBe('206');
      expect(sha(fs.readFileSync(out))).toBe(release.sha256);
    } finally {
      fs.rmSync(dir, { recursive: true, force: true });
    }
  });
});
