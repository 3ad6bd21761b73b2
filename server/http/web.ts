// How the exported web app (dist/) and the API's answers travel: compressed when the browser accepts it,
// cached by what each file is.
//
// - Precompressed files: the build writes name.br and name.gz beside each compressible file
//   (scripts/lib/web-build.js); a request gets the one its Accept-Encoding prefers (RFC 9110 §12.5.3),
//   with Content-Encoding naming it (§8.4) and `Vary: Accept-Encoding` on every answer that has variants
//   (§12.5.5), compressed or not, so a shared cache keeps them apart.
// - Cache-Control (RFC 9111 §5.2.2): a content-hashed name never changes its content, so it is public for
//   a year and `immutable` (RFC 8246: not revalidated even on reload); anything else (index.html, sw.js,
//   the manifest, icons) is `no-cache`: kept, but revalidated before each use (ETag / Last-Modified).
// - Client-side routes fall back to index.html, under the same rules.
// - API answers (JSON, CSV) are compressed as they are written (the `compression` middleware), except the
//   device API: loggers are small boards whose contract (docs/DEVICE_API.md) has no content coding.
import fs from 'node:fs';
import path from 'node:path';
import express, { type NextFunction, type Request, type Response } from 'express';
import compression from 'compression';
import { problems } from './problem';

/** Content-hashed file names; the same pattern as scripts/lib/web-build.js CONTENT_HASHED (tests/unit/web-build.test.ts). */
export const CONTENT_HASHED = /[.-][0-9a-f]{32}(?:@\d+x)?\.[a-z0-9]+$/i;

export const IMMUTABLE = 'public, max-age=31536000, immutable';
export const REVALIDATE = 'no-cache';

/** The Cache-Control of a file of the web app, by its name. */
export function cacheControlFor(file: string): string {
  return CONTENT_HASHED.test(path.basename(file)) ? IMMUTABLE : REVALIDATE;
}

/** The content codings the build writes, best first (brotli is the smaller), with their file suffixes. */
const CODINGS = [
  { coding: 'br', suffix: '.br' },
  { coding: 'gzip', suffix: '.gz' },
] as const;
type Coding = (typeof CODINGS)[number]['coding'] | 'identity';

/**
 * The coding to send, from an Accept-Encoding value (RFC 9110 §12.5.3): a list of codings, each with an
 * optional weight `q` (0 = not acceptable); `*` stands for any coding not listed; `x-gzip` is gzip
 * (§8.4.1.3); names are case-insensitive. Among the acceptable codings the highest weight wins, ties going
 * to the smaller (br before gzip). `identity` is acceptable unless refused by `identity;q=0` or `*;q=0`,
 * and when not named it comes after every coding that is (when nothing at all is acceptable the file is
 * sent as it is: §12.5.3 allows that rather than a 406).
 * No header at all: identity (§12.5.3 allows any coding then; sending none is the safe choice).
 * `available` lists the codings that exist for this file.
 */
export function chooseCoding(header: string | undefined, available: readonly Coding[]): Coding {
  if (header === undefined) return 'identity';
  const weights = new Map<string, number>();
  for (const part of header.split(',')) {
    const [rawName, ...params] = part.trim().split(';');
    let name = rawName.trim().toLowerCase();
    if (!name) continue;
    if (name === 'x-gzip') name = 'gzip';
    let q = 1;
    for (const p of params) {
      const [k, v] = p.split('=').map((s) => s.trim());
      if (k.toLowerCase() === 'q') {
        const n = Number(v);
        q = Number.isFinite(n) && /^(?:0(?:\.\d{0,3})?|1(?:\.0{0,3})?)$/.test(v ?? '') ? n : 0;
      }
    }
    // A coding listed twice keeps its highest weight.
    weights.set(name, Math.max(q, weights.get(name) ?? 0));
  }
  // identity, when not named, is acceptable but below any coding the browser named.
  const weightOf = (coding: string) => weights.get(coding) ?? weights.get('*') ?? (coding === 'identity' ? 0.0001 : 0);
  let best: Coding = 'identity';
  let bestQ = weightOf('identity');
  for (const { coding } of CODINGS) {
    if (!available.includes(coding)) continue;
    const q = weightOf(coding);
    if (q > 0 && q > bestQ) {
      best = coding;
      bestQ = q;
    } else if (q > 0 && q === bestQ && best === 'identity') {
      best = coding;
    }
  }
  return best;
}

/**
 * Serves the exported web app from `webDir`: files by name, precompressed by Accept-Encoding, and
 * index.html for any other GET outside /api (the console's client-side routes).
 */
export function webApp(webDir: string) {
  const router = express.Router();
  const root = path.resolve(webDir);

  /** Sends `rel` (a path inside webDir that exists as a file), choosing its precompressed copy. */
  const send = (req: Request, res: Response, next: NextFunction, rel: string) => {
    const file = path.join(root, rel);
    const available = CODINGS.filter(({ suffix }) => fs.existsSync(file + suffix)).map(({ coding }) => coding);
    const coding = chooseCoding(req.headers['accept-encoding'], available);
    if (available.length > 0) res.vary('Accept-Encoding');
    res.setHeader('Cache-Control', cacheControlFor(rel));
    res.type(path.extname(rel) || 'application/octet-stream');
    const suffix = CODINGS.find((c) => c.coding === coding)?.suffix ?? '';
    if (suffix) res.setHeader('Content-Encoding', coding);
    // `send` keeps the Content-Type set here, and gives each coding its own ETag (from its own file).
    res.sendFile(file + suffix, { cacheControl: false, dotfiles: 'deny' }, (err) => {
      if (err && !res.headersSent) next(err);
    });
  };

  /** The file a URL path names inside webDir, or null (outside it, a folder, a dotfile, missing). */
  const fileOf = (urlPath: string): string | null => {
    let rel: string;
    try {
      rel = decodeURIComponent(urlPath);
    } catch {
      return null;
    }
    if (rel.includes('\0')) return null;
    rel = path.normalize(rel).replace(/^[/\\]+/, '');
    if (!rel || rel.startsWith('..') || rel.split(/[/\\]/).some((s) => s.startsWith('.'))) return null;
    const full = path.join(root, rel);
    if (!full.startsWith(root + path.sep)) return null;
    try {
      return fs.statSync(full).isFile() ? rel : null;
    } catch {
      return null;
    }
  };

  router.use((req, res, next) => {
    if (req.method !== 'GET' && req.method !== 'HEAD') return next();
    if (req.path === '/api' || req.path.startsWith('/api/')) return next();
    // A path whose percent-encoding is not UTF-8 names no page (RFC 3986 §2.1): a 400, like the API's routes.
    try {
      decodeURIComponent(req.path);
    } catch {
      return next(problems.badRequest('The address holds a percent-encoding that is not UTF-8.'));
    }
    const rel = fileOf(req.path);
    if (rel) return send(req, res, next, rel);
    if (!fs.existsSync(path.join(root, 'index.html'))) return next(problems.notFound('page', 'The web app is not built yet: run npm start.'));
    return send(req, res, next, 'index.html');
  });
  return router;
}

/** The API's answers compressed when the caller accepts it, except the device API's. */
export function apiCompression() {
  return compression({
    filter: (req, res) => !req.originalUrl.startsWith('/api/device/') && compression.filter(req, res),
  });
}
