// The steps after `expo export` (scripts/lib/web-build.js) on a small export written here: precompressed
// copies that decode (with Node's zlib: brotli RFC 7932, gzip RFC 1952) to the file they stand for, the
// service worker's list of kept files, the manifest linked from index.html. And the build and the server
// agree on which names are content-hashed (RFC 8246 immutable is only right for those) — docs/SOURCES.md §16.
import { execFileSync } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import zlib from 'node:zlib';
import { CONTENT_HASHED as serverPattern, cacheControlFor } from '../../server/http/web';

const build = require('../../scripts/lib/web-build.js') as {
  finishWebBuild(dir: string): { precached: number; compressed: number };
  CONTENT_HASHED: RegExp;
};

const HASH = '3ddc9cfffc20048d9640668f4185edd4';
let dir: string;
const files: Record<string, string> = {
  'index.html': '<!DOCTYPE html><html><head><title>Heliodor</title></head><body><div id="root"></div></body></html>',
  [`_expo/static/js/web/entry-${HASH}.js`]: 'var site = "Aldmere Vale";\n'.repeat(300),
  [`_expo/static/js/web/sign-in-${HASH}.js`]: 'var who = "Morgan";\n'.repeat(200),
  [`assets/node_modules/fonts/Plex.${HASH}.ttf`]: 'glyph outlines '.repeat(400),
  'favicon.ico': 'icon bytes '.repeat(100),
  'metadata.json': '{"version":0}',
};

beforeAll(() => {
  dir = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-web-build-'));
  for (const [name, text] of Object.entries(files)) {
    fs.mkdirSync(path.dirname(path.join(dir, name)), { recursive: true });
    fs.writeFileSync(path.join(dir, name), text);
  }
  // In a child Node process, as `npm run build:web` runs it: esbuild's synchronous API inside a jest
  // worker takes many times longer than on its own.
  execFileSync(process.execPath, ['-e', `require(${JSON.stringify(require.resolve('../../scripts/lib/web-build.js'))}).finishWebBuild(${JSON.stringify(dir)})`]);
}, 60_000);

afterAll(() => fs.rmSync(dir, { recursive: true, force: true }));

test('when the build and the server name content-hashed files, then they use the same pattern', () => {
  expect(build.CONTENT_HASHED.source).toBe(serverPattern.source);
  expect(build.CONTENT_HASHED.flags).toBe(serverPattern.flags);
});

test.each([
  [`entry-${HASH}.js`, 'public, max-age=31536000, immutable'],
  [`IBMPlexSans_400Regular.${HASH}.ttf`, 'public, max-age=31536000, immutable'],
  [`close-icon.${HASH}@2x.png`, 'public, max-age=31536000, immutable'],
  ['index.html', 'no-cache'],
  ['sw.js', 'no-cache'],
  ['manifest.webmanifest', 'no-cache'],
  ['icon-192.png', 'no-cache'],
  ['entry-3ddc9cff.js', 'no-cache'], // too short to be the bundler's content hash
])('when the file is %s, then its Cache-Control is "%s" (RFC 9111 §5.2.2, RFC 8246 §2)', (name, value) => {
  expect(cacheControlFor(name)).toBe(value);
});

test('when the export is finished, then every text file and font has a .br and a .gz that decode to it', () => {
  for (const name of ['index.html', `_expo/static/js/web/entry-${HASH}.js`, `assets/node_modules/fonts/Plex.${HASH}.ttf`, 'favicon.ico', 'sw.js', 'manifest.webmanifest']) {
    const original = fs.readFileSync(path.join(dir, name));
    expect(zlib.brotliDecompressSync(fs.readFileSync(path.join(dir, `${name}.br`)))).toEqual(original);
    expect(zlib.gunzipSync(fs.readFileSync(path.join(dir, `${name}.gz`)))).toEqual(original);
  }
  expect(fs.existsSync(path.join(dir, 'icons', 'icon-192.png.br'))).toBe(false);
});

test('when the export is finished, then the service worker keeps the shell, the scripts, the fonts and the manifest, and no compressed copy', () => {
  const sw = fs.readFileSync(path.join(dir, 'sw.js'), 'utf8');
  for (const url of ['/index.html', `/_expo/static/js/web/entry-${HASH}.js`, `/_expo/static/js/web/sign-in-${HASH}.js`, `/assets/node_modules/fonts/Plex.${HASH}.ttf`, '/manifest.webmanifest', '/icons/icon-192.png', '/icons/icon-512.png']) {
    expect(sw).toContain(`"${url}"`);
  }
  expect(sw).not.toMatch(/\.(?:br|gz)"/);
  expect(sw).not.toContain('"/metadata.json"');
  expect(sw).not.toContain('self.__WB_MANIFEST');
});

test('when the export is finished, then index.html links the manifest, and the manifest names the app, its start and its icons', () => {
  const html = fs.readFileSync(path.join(dir, 'index.html'), 'utf8');
  expect(html).toContain('<link rel="manifest" href="/manifest.webmanifest" />');
  const manifest = JSON.parse(fs.readFileSync(path.join(dir, 'manifest.webmanifest'), 'utf8'));
  expect(manifest).toMatchObject({ name: 'Heliodor', short_name: 'Heliodor', start_url: '/', display: 'standalone' });
  expect(manifest.icons.map((i: { sizes: string }) => i.sizes)).toEqual(expect.arrayContaining(['192x192', '512x512']));
  for (const icon of manifest.icons) expect(fs.existsSync(path.join(dir, icon.src))).toBe(true);
});
