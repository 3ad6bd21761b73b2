// How the web app and the API's answers travel: content codings chosen by Accept-Encoding, Vary, and
// Cache-Control by file kind. The web app here is a small folder written by the test the way the build
// writes dist/ (a file, its .br and .gz beside it), so each answer can be compared byte for byte; the
// codings are decoded with Node's zlib (brotli RFC 7932, gzip RFC 1952), not with the server's code.
// Sources: RFC 9110 §8.4 (Content-Encoding), §12.5.3 (Accept-Encoding, its examples), §12.5.5 (Vary);
// RFC 9111 §5.2.2 (Cache-Control directives); RFC 8246 §2 (immutable) — docs/SOURCES.md §16.
import fs from 'node:fs';
import http from 'node:http';
import os from 'node:os';
import path from 'node:path';
import zlib from 'node:zlib';
import { startTestApp, testPassword, type TestApp } from '../helpers/app';
import { chooseCoding } from '../../server/http/web';

type Raw = { status: number; headers: http.IncomingHttpHeaders; body: Buffer };

/** A GET with exactly these headers, the body as the bytes on the wire (nothing decoded). */
function rawGet(base: string, p: string, headers: Record<string, string> = {}): Promise<Raw> {
  return new Promise((resolve, reject) => {
    http
      .get(base + p, { headers }, (res) => {
        const chunks: Buffer[] = [];
        res.on('data', (c: Buffer) => chunks.push(c));
        res.on('end', () => resolve({ status: res.statusCode ?? 0, headers: res.headers, body: Buffer.concat(chunks) }));
      })
      .on('error', reject);
  });
}

const varyList = (r: Raw) => String(r.headers.vary ?? '').split(',').map((s) => s.trim().toLowerCase());

const HASH = '0823411afa5e7bbb57adeec4d84ae21c';
const files: Record<string, string> = {
  'index.html': `<!DOCTYPE html><html><head><title>Heliodor</title></head><body><div id="root"></div>${'<!-- shell -->'.repeat(80)}</body></html>`,
  [`_expo/static/js/web/entry-${HASH}.js`]: `console.log("Fernhollow Energy Co-op");\n`.repeat(400),
  [`assets/fonts/Plex.${HASH}.ttf`]: 'glyphs '.repeat(500),
  'sw.js': `self.addEventListener("fetch", () => {});\n`.repeat(100),
  'manifest.webmanifest': JSON.stringify({ name: 'Heliodor', short_name: 'Heliodor', icons: [] }).padEnd(2000, ' '),
  'icons/icon-192.png': 'not compressed: images are compressed already',
};
const compressed = ['index.html', `_expo/static/js/web/entry-${HASH}.js`, `assets/fonts/Plex.${HASH}.ttf`, 'sw.js', 'manifest.webmanifest'];

let t: TestApp;
let base: string;
let webDir: string;

beforeAll(async () => {
  webDir = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-web-'));
  for (const [name, text] of Object.entries(files)) {
    fs.mkdirSync(path.dirname(path.join(webDir, name)), { recursive: true });
    fs.writeFileSync(path.join(webDir, name), text);
  }
  for (const name of compressed) {
    fs.writeFileSync(path.join(webDir, `${name}.br`), zlib.brotliCompressSync(Buffer.from(files[name])));
    fs.writeFileSync(path.join(webDir, `${name}.gz`), zlib.gzipSync(Buffer.from(files[name])));
  }
  t = await startTestApp({ seed: 'demo', webDir });
  base = await t.listen();
});

afterAll(async () => {
  await t?.close();
  fs.rmSync(webDir, { recursive: true, force: true });
});

describe('content coding of the web app (RFC 9110 §8.4, §12.5.3)', () => {
  const js = `/_expo/static/js/web/entry-${HASH}.js`;

  test('when the browser accepts br and gzip, then the brotli copy is sent, named in Content-Encoding, and decodes to the file', async () => {
    const r = await rawGet(base, js, { 'Accept-Encoding': 'gzip, deflate, br' });
    expect(r.status).toBe(200);
    expect(r.headers['content-encoding']).toBe('br');
    expect(r.headers['content-type']).toMatch(/^application\/javascript|^text\/javascript/);
    expect(zlib.brotliDecompressSync(r.body).toString()).toBe(files[js.slice(1)]);
  });

  test('when the browser accepts gzip only, then the gzip copy is sent and decodes to the file', async () => {
    const r = await rawGet(base, js, { 'Accept-Encoding': 'gzip' });
    expect(r.headers['content-encoding']).toBe('gzip');
    expect(zlib.gunzipSync(r.body).toString()).toBe(files[js.slice(1)]);
  });

  test('when the request has no Accept-Encoding, then the file is sent as it is, with no Content-Encoding', async () => {
    const r = await rawGet(base, js);
    expect(r.headers['content-encoding']).toBeUndefined();
    expect(r.body.toString()).toBe(files[js.slice(1)]);
  });

  test('when Accept-Encoding is empty ("Accept-Encoding:", an RFC 9110 §12.5.3 example), then no coding is used', async () => {
    const r = await rawGet(base, js, { 'Accept-Encoding': '' });
    expect(r.headers['content-encoding']).toBeUndefined();
    expect(r.body.toString()).toBe(files[js.slice(1)]);
  });

  test('when gzip is weighted above br, then gzip is sent (weights decide, §12.4.2 qvalues)', async () => {
    const r = await rawGet(base, js, { 'Accept-Encoding': 'br;q=0.5, gzip;q=1.0' });
    expect(r.headers['content-encoding']).toBe('gzip');
  });

  test('when br is refused with q=0, then it is never sent', async () => {
    const r = await rawGet(base, js, { 'Accept-Encoding': 'br;q=0, gzip' });
    expect(r.headers['content-encoding']).toBe('gzip');
  });

  test('when the HTML shell is asked for by a client-side route, then it too comes precompressed', async () => {
    const r = await rawGet(base, '/loggers?flag=low_supply', { 'Accept-Encoding': 'br' });
    expect(r.status).toBe(200);
    expect(r.headers['content-type']).toMatch(/^text\/html/);
    expect(r.headers['content-encoding']).toBe('br');
    expect(zlib.brotliDecompressSync(r.body).toString()).toBe(files['index.html']);
  });

  test('when a file has no compressed copy (a PNG), then it is sent as it is without Vary', async () => {
    const r = await rawGet(base, '/icons/icon-192.png', { 'Accept-Encoding': 'br, gzip' });
    expect(r.headers['content-encoding']).toBeUndefined();
    expect(r.body.toString()).toBe(files['icons/icon-192.png']);
    expect(varyList(r)).not.toContain('accept-encoding');
  });

  test('when the two codings of one file are fetched, then each has its own entity tag (RFC 9110 §8.8.3: a tag names one representation)', async () => {
    const br = await rawGet(base, js, { 'Accept-Encoding': 'br' });
    const gz = await rawGet(base, js, { 'Accept-Encoding': 'gzip' });
    const plain = await rawGet(base, js);
    expect(new Set([br.headers.etag, gz.headers.etag, plain.headers.etag]).size).toBe(3);
  });
});

describe('choosing a coding from Accept-Encoding (RFC 9110 §12.5.3 and its examples)', () => {
  const both = ['br', 'gzip'] as const;
  test.each([
    ['compress, gzip', 'gzip'], // §12.5.3 example: compress is not one we have
    ['*', 'br'], // §12.5.3 example: any coding
    ['compress;q=0.5, gzip;q=1.0', 'gzip'], // §12.5.3 example
    ['gzip;q=1.0, identity; q=0.5, *;q=0', 'gzip'], // §12.5.3 example
    ['br;q=0.2, identity;q=0.5', 'identity'], // identity named above br
    ['x-gzip', 'gzip'], // §8.4.1.3: x-gzip is gzip
    ['GZIP', 'gzip'], // §8.4.1: coding names are case-insensitive
    ['br;q=0.5', 'br'], // identity not named: below every named coding (our rule within §12.5.3)
    ['identity;q=0, *;q=0', 'identity'], // nothing acceptable: the file as it is rather than a 406 (§12.5.3 allows)
  ])('when Accept-Encoding is "%s", then %s is chosen', (header, coding) => {
    expect(chooseCoding(header, both)).toBe(coding);
  });

  test('when the example "gzip;q=1.0, identity; q=0.5, *;q=0" meets a file with only a brotli copy, then br (excluded by *;q=0) is not sent', () => {
    expect(chooseCoding('gzip;q=1.0, identity; q=0.5, *;q=0', ['br'])).toBe('identity');
  });
});

describe('Vary (RFC 9110 §12.5.5)', () => {
  test('when a file has compressed copies, then every answer for it, compressed or not, says Vary: Accept-Encoding', async () => {
    for (const headers of [{ 'Accept-Encoding': 'br' }, { 'Accept-Encoding': 'gzip' }, {}] as Record<string, string>[]) {
      const r = await rawGet(base, '/sw.js', headers);
      expect(varyList(r)).toContain('accept-encoding');
    }
  });
});

describe('Cache-Control by file kind (RFC 9111 §5.2.2, RFC 8246)', () => {
  test('when a content-hashed script or font is fetched, then it is public for a year and immutable', async () => {
    for (const p of [`/_expo/static/js/web/entry-${HASH}.js`, `/assets/fonts/Plex.${HASH}.ttf`]) {
      const r = await rawGet(base, p, { 'Accept-Encoding': 'br' });
      expect(r.headers['cache-control']).toBe('public, max-age=31536000, immutable');
    }
  });

  test('when the HTML shell is fetched, by its name or a client-side route, then it must be revalidated (no-cache)', async () => {
    for (const p of ['/index.html', '/', '/sign-in', '/releases/new']) {
      const r = await rawGet(base, p, { 'Accept-Encoding': 'gzip' });
      expect(r.headers['content-type']).toMatch(/^text\/html/);
      expect(r.headers['cache-control']).toBe('no-cache');
    }
  });

  test('when a file without a content hash is fetched (the service worker, the manifest, an icon), then it is no-cache too', async () => {
    for (const p of ['/sw.js', '/manifest.webmanifest', '/icons/icon-192.png']) {
      const r = await rawGet(base, p);
      expect(r.headers['cache-control']).toBe('no-cache');
    }
  });

  test('when the manifest is fetched, then its media type is the web app manifest type', async () => {
    const r = await rawGet(base, '/manifest.webmanifest');
    expect(r.headers['content-type']).toMatch(/^application\/manifest\+json/);
  });

  test('when a path leaves the web folder, then nothing outside it is sent', async () => {
    const r = await rawGet(base, '/..%2f..%2fetc%2fpasswd');
    expect(r.body.toString()).not.toContain('root:');
  });
});

describe('API answers (compression middleware)', () => {
  let cookie: string;
  beforeAll(async () => {
    const res = await t.request().post('/api/auth/sign-in').send({ email: 'lena@fernhollow.example', password: testPassword });
    expect(res.status).toBe(200);
    cookie = (res.headers['set-cookie'] as unknown as string[]).map((c) => c.split(';')[0]).join('; ');
  });

  test('when the fleet list is asked for with gzip accepted, then the JSON comes gzipped, with Vary, and decodes to the same answer', async () => {
    const zipped = await rawGet(base, '/api/loggers', { Cookie: cookie, 'Accept-Encoding': 'gzip' });
    const plain = await rawGet(base, '/api/loggers', { Cookie: cookie });
    expect(zipped.status).toBe(200);
    expect(zipped.headers['content-encoding']).toBe('gzip');
    expect(varyList(zipped)).toContain('accept-encoding');
    expect(plain.headers['content-encoding']).toBeUndefined();
    expect(JSON.parse(zlib.gunzipSync(zipped.body).toString())).toEqual(JSON.parse(plain.body.toString()));
  });

  test('when the fleet CSV export is asked for with br accepted, then it comes compressed and decodes to the CSV', async () => {
    const r = await rawGet(base, '/api/loggers/export.csv', { Cookie: cookie, 'Accept-Encoding': 'br' });
    expect(r.status).toBe(200);
    expect(r.headers['content-type']).toMatch(/^text\/csv/);
    expect(r.headers['content-encoding']).toBe('br');
    expect(zlib.brotliDecompressSync(r.body).toString().split('\n')[0]).toMatch(/serial/i);
  });

  test('when the device API answers a caller accepting gzip, then it uses no content coding (the device contract has none; our rule)', async () => {
    const res = await rawGet(base, '/api/device/v1/openapi.json', { 'Accept-Encoding': 'gzip' });
    expect(res.status).toBe(200);
    expect(res.body.length).toBeGreaterThan(1024); // large enough that the middleware would compress it
    expect(res.headers['content-encoding']).toBeUndefined();
    expect(JSON.parse(res.body.toString())).toHaveProperty('openapi');
  });
});
