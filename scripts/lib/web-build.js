// The steps after `expo export --platform web` (scripts/lib/bootstrap.js exportWeb runs them on the
// fresh export before it is swapped in as dist/):
//   1. the web app manifest and its icons, drawn from the shipped favicon's colour (assets/images/favicon.png),
//      and their links in index.html;
//   2. the service worker (scripts/lib/service-worker.js on workbox's modules, bundled by esbuild): the
//      shell, every JS chunk and the fonts kept, navigations answered with the kept index.html, the API
//      never kept (see API_ANSWERS_KEPT there);
//   3. a brotli (.br) and a gzip (.gz) copy beside every compressible file, which the server sends by the
//      request's Accept-Encoding (server/http/web.ts).
// Plain CommonJS: the npm scripts run it before TypeScript is in play. It runs after ensureNodeModules, so
// its packages (esbuild, workbox-*, pngjs) are there.
'use strict';

const crypto = require('node:crypto');
const fs = require('node:fs');
const path = require('node:path');
const zlib = require('node:zlib');

const root = path.resolve(__dirname, '..', '..');

/**
 * Content-hashed file names (the bundler puts a hash of the content in the name: entry-<32 hex>.js,
 * IBMPlexSans_400Regular.<32 hex>.ttf, close-icon.<32 hex>@2x.png). Such a file never changes under its
 * name, so it is cached for a year and never revalidated. server/http/web.ts holds the same pattern
 * (tests/unit/web-build.test.ts checks they agree).
 */
const CONTENT_HASHED = /[.-][0-9a-f]{32}(?:@\d+x)?\.[a-z0-9]+$/i;

/** Files worth compressing: text and fonts. Images (PNG) are compressed already. */
const COMPRESSIBLE = /\.(?:js|mjs|css|html|json|webmanifest|map|svg|txt|ttf|otf|ico)$/i;

// The manifest's colours: components/theme.ts colors.paper (background) and colors.ink (the mark).
const PAPER = '#F7F5EE';
const INK = [0x1e, 0x2a, 0x2f];

/**
 * An icon of `size` px: the favicon's colour, edge to edge (so it can be masked to any shape), with a sun
 * mark in ink inside the central 60 % (the safe zone of a maskable icon): a disc and eight rays, the
 * geometry of the console's overview icon (components/icons.tsx). Drawn with 4×4 samples per pixel.
 */
function drawIcon(size, background) {
  const { PNG } = require('pngjs');
  const png = new PNG({ width: size, height: size });
  const unit = (size * 0.6) / 24; // the icon's 24-unit grid inside the safe zone
  const offset = size * 0.2;
  const stroke = 2.2 * unit;
  const c = 12;
  const rays = [];
  for (let i = 0; i < 8; i++) {
    const a = (i * Math.PI) / 4;
    rays.push([c + 6.5 * Math.cos(a), c + 6.5 * Math.sin(a), c + 9.5 * Math.cos(a), c + 9.5 * Math.sin(a)]);
  }
  const segDistance = (px, py, [x1, y1, x2, y2]) => {
    const dx = x2 - x1;
    const dy = y2 - y1;
    const t = Math.max(0, Math.min(1, ((px - x1) * dx + (py - y1) * dy) / (dx * dx + dy * dy)));
    return Math.hypot(px - (x1 + t * dx), py - (y1 + t * dy));
  };
  const inMark = (x, y) => {
    const gx = (x - offset) / unit;
    const gy = (y - offset) / unit;
    if (Math.hypot(gx - c, gy - c) <= 4.2) return true;
    return rays.some((r) => segDistance(gx, gy, r) * unit <= stroke / 2);
  };
  for (let y = 0; y < size; y++) {
    for (let x = 0; x < size; x++) {
      let hits = 0;
      for (let sy = 0; sy < 4; sy++) for (let sx = 0; sx < 4; sx++) if (inMark(x + (sx + 0.5) / 4, y + (sy + 0.5) / 4)) hits++;
      const k = hits / 16;
      const i = (y * size + x) * 4;
      for (let ch = 0; ch < 3; ch++) png.data[i + ch] = Math.round(background[ch] * (1 - k) + INK[ch] * k);
      png.data[i + 3] = 255;
    }
  }
  return PNG.sync.write(png);
}

/** The favicon's colour (it is one colour, edge to edge). */
function faviconColour() {
  const { PNG } = require('pngjs');
  const png = PNG.sync.read(fs.readFileSync(path.join(root, 'assets', 'images', 'favicon.png')));
  const i = (Math.floor(png.height / 2) * png.width + Math.floor(png.width / 2)) * 4;
  return [png.data[i], png.data[i + 1], png.data[i + 2]];
}

const hex = (rgb) => `#${rgb.map((v) => v.toString(16).padStart(2, '0')).join('')}`.toUpperCase();

/** Step 1: manifest.webmanifest, icons/, and the links in index.html. */
function writeManifest(dir) {
  const colour = faviconColour();
  fs.mkdirSync(path.join(dir, 'icons'), { recursive: true });
  for (const size of [192, 512]) fs.writeFileSync(path.join(dir, 'icons', `icon-${size}.png`), drawIcon(size, colour));
  const manifest = {
    name: 'Heliodor',
    short_name: 'Heliodor',
    description: 'Provision solar energy loggers, enroll them on site and ship signed firmware in staged releases.',
    id: '/',
    start_url: '/',
    scope: '/',
    display: 'standalone',
    orientation: 'any',
    background_color: PAPER,
    theme_color: hex(colour),
    icons: [
      { src: '/icons/icon-192.png', sizes: '192x192', type: 'image/png', purpose: 'any' },
      { src: '/icons/icon-512.png', sizes: '512x512', type: 'image/png', purpose: 'any' },
      { src: '/icons/icon-512.png', sizes: '512x512', type: 'image/png', purpose: 'maskable' },
    ],
  };
  fs.writeFileSync(path.join(dir, 'manifest.webmanifest'), `${JSON.stringify(manifest, null, 2)}\n`);
  const indexFile = path.join(dir, 'index.html');
  const html = fs.readFileSync(indexFile, 'utf8');
  if (!html.includes('rel="manifest"')) {
    const links =
      '<link rel="manifest" href="/manifest.webmanifest" />' +
      `<meta name="theme-color" content="${hex(colour)}" />` +
      '<link rel="apple-touch-icon" href="/icons/icon-192.png" />';
    fs.writeFileSync(indexFile, html.replace('</head>', `${links}</head>`));
  }
}

/** The files the service worker keeps: the shell, every JS chunk, the fonts, the manifest and icons. */
const PRECACHED = /^(?:index\.html|manifest\.webmanifest|favicon\.ico|icons\/[^/]+\.png|_expo\/static\/.+\.(?:js|css)|assets\/.+\.(?:ttf|otf))$/;

/**
 * Step 2: sw.js, scripts/lib/service-worker.js bundled with workbox's modules (esbuild), its list of kept
 * files written in: each file's URL, and for a name without a content hash a revision (its SHA-256), so
 * a changed index.html replaces the kept one.
 */
function writeServiceWorker(dir) {
  const entries = [];
  const visit = (rel) => {
    for (const entry of fs.readdirSync(path.join(dir, rel), { withFileTypes: true })) {
      const name = rel ? `${rel}/${entry.name}` : entry.name;
      if (entry.isDirectory()) visit(name);
      else if (PRECACHED.test(name)) {
        const revision = CONTENT_HASHED.test(entry.name) ? null : crypto.createHash('sha256').update(fs.readFileSync(path.join(dir, name))).digest('hex').slice(0, 32);
        entries.push({ url: `/${name}`, revision, bytes: fs.statSync(path.join(dir, name)).size });
      }
    }
  };
  visit('');
  entries.sort((a, b) => a.url.localeCompare(b.url));
  const manifest = entries.map(({ url, revision }) => ({ url, revision }));
  require('esbuild').buildSync({
    entryPoints: [path.join(__dirname, 'service-worker.js')],
    bundle: true,
    minify: true,
    format: 'iife',
    target: 'es2020',
    outfile: path.join(dir, 'sw.js'),
    define: { 'self.__WB_MANIFEST': JSON.stringify(manifest), 'process.env.NODE_ENV': '"production"' },
    logLevel: 'warning',
  });
  return { count: entries.length, size: entries.reduce((n, e) => n + e.bytes, 0) };
}

/** Step 3: .br and .gz beside each compressible file, kept only when smaller than the file. */
function precompress(dir) {
  let files = 0;
  const visit = (p) => {
    for (const entry of fs.readdirSync(p, { withFileTypes: true })) {
      const full = path.join(p, entry.name);
      if (entry.isDirectory()) visit(full);
      else if (COMPRESSIBLE.test(entry.name)) {
        const data = fs.readFileSync(full);
        const br = zlib.brotliCompressSync(data, {
          params: {
            [zlib.constants.BROTLI_PARAM_QUALITY]: zlib.constants.BROTLI_MAX_QUALITY,
            [zlib.constants.BROTLI_PARAM_MODE]: /\.(?:ttf|otf)$/i.test(entry.name) ? zlib.constants.BROTLI_MODE_FONT : zlib.constants.BROTLI_MODE_TEXT,
            [zlib.constants.BROTLI_PARAM_SIZE_HINT]: data.length,
          },
        });
        const gz = zlib.gzipSync(data, { level: zlib.constants.Z_BEST_COMPRESSION });
        if (br.length < data.length) fs.writeFileSync(`${full}.br`, br);
        if (gz.length < data.length) fs.writeFileSync(`${full}.gz`, gz);
        files++;
      }
    }
  };
  visit(dir);
  return files;
}

/** All three steps on a fresh export in `dir`. */
function finishWebBuild(dir) {
  writeManifest(dir);
  const sw = writeServiceWorker(dir);
  const compressed = precompress(dir);
  return { precached: sw.count, precachedBytes: sw.size, compressed };
}

module.exports = { finishWebBuild, CONTENT_HASHED, COMPRESSIBLE, PRECACHED, drawIcon };

// `node scripts/lib/web-build.js <dir>`: the steps alone, on an export made by hand.
if (require.main === module) {
  const dir = path.resolve(process.argv[2] || path.join(root, 'dist'));
  const r = finishWebBuild(dir);
  process.stdout.write(`[heliodor] ${r.precached} files kept by the service worker (${(r.precachedBytes / 1024).toFixed(0)} KB), ${r.compressed} compressed\n`);
}
