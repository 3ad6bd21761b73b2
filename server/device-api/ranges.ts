// HTTP range requests for firmware images (RFC 9110 §14, §13.1.5, §8.8.3; docs/SOURCES.md §10). Pure.
//
// A logger on a weak link resumes an interrupted download with `Range: bytes=<received>-`, usually with
// `If-Range: "<sha256>"` so that it never splices two different images. This module only reads the
// headers; the route streams the bytes.

/**
 * What to answer to a Range header for a representation of `size` bytes:
 * - none: no usable Range — send the whole image with 200;
 * - single: send bytes start…end (inclusive) with 206 and Content-Range;
 * - unsatisfiable: 416 with `Content-Range: bytes *\/<size>`;
 * - multiple: several ranges of which at least one is satisfiable — DEVICE_API.md lets us send the
 *   whole image with 200 instead of multipart/byteranges.
 */
export type RangeRequest =
  | { kind: 'none' }
  | { kind: 'single'; start: number; end: number }
  | { kind: 'unsatisfiable' }
  | { kind: 'multiple' };

type Spec = { kind: 'int'; first: number; last: number | null } | { kind: 'suffix'; length: number };

const NONE: RangeRequest = { kind: 'none' };

/**
 * Parse `Range` (RFC 9110 §14.1.1 grammar, §14.2 handling):
 * - absent, or a unit other than bytes (case-insensitive): ignored, as §14.2 requires of an origin
 *   server ("MUST ignore a Range header field that contains a range unit it does not understand");
 * - syntactically invalid (no `=`, no range, letters, a sign, spaces inside a range, last < first):
 *   ignored — §14.2 lets a server ignore an invalid ranges-specifier, and the full image is always a
 *   correct answer;
 * - `first-last`, `first-`, `-suffix`, separated by commas with optional whitespace; empty list
 *   elements are skipped (RFC 9110 §5.6.1);
 * - an int-range is satisfiable when first < size; last beyond the end is clamped to size − 1;
 *   a suffix-range is satisfiable when its length is not zero (`-0` is not); a suffix longer than the
 *   image means the whole image (§14.1.2);
 * - numbers too large to be exact in a double (more than 2^53 − 1) are read as "beyond any image",
 *   never wrapped (§14.1.2 asks to guard against overflow).
 * A zero-length image has no byte to send in a 206 (Content-Range cannot express an empty range), so a
 * satisfiable suffix on it is answered with the whole (empty) image.
 */
export function parseRange(header: string | null | undefined, size: number): RangeRequest {
  if (header === undefined || header === null) return NONE;
  const eq = header.indexOf('=');
  if (eq < 0) return NONE;
  const unit = header.slice(0, eq).trim();
  if (unit.toLowerCase() !== 'bytes') return NONE;

  const specs: Spec[] = [];
  for (const element of header.slice(eq + 1).split(',')) {
    const text = element.trim();
    if (text === '') continue;
    const spec = parseSpec(text);
    if (!spec) return NONE;
    specs.push(spec);
  }
  if (specs.length === 0) return NONE;

  const satisfiable = specs.filter((s) => (s.kind === 'int' ? s.first < size : s.length > 0));
  if (satisfiable.length === 0) return { kind: 'unsatisfiable' };
  if (specs.length > 1) return { kind: 'multiple' };

  const spec = satisfiable[0];
  if (size === 0) return NONE;
  if (spec.kind === 'suffix') return { kind: 'single', start: Math.max(0, size - spec.length), end: size - 1 };
  return { kind: 'single', start: spec.first, end: spec.last === null ? size - 1 : Math.min(spec.last, size - 1) };
}

const INT_RANGE = /^([0-9]+)-([0-9]*)$/;
const SUFFIX_RANGE = /^-([0-9]+)$/;

function parseSpec(text: string): Spec | null {
  const suffix = SUFFIX_RANGE.exec(text);
  if (suffix) return { kind: 'suffix', length: position(suffix[1]) };
  const int = INT_RANGE.exec(text);
  if (!int) return null;
  const first = position(int[1]);
  const last = int[2] === '' ? null : position(int[2]);
  // §14.1.1: a last-pos below first-pos makes the ranges-specifier invalid.
  if (last !== null && last < first) return null;
  return { kind: 'int', first, last };
}

/** A decimal byte position; anything past 2^53 − 1 becomes Infinity, which lies beyond every image. */
function position(digits: string): number {
  const value = BigInt(digits);
  return value > BigInt(Number.MAX_SAFE_INTEGER) ? Number.POSITIVE_INFINITY : Number(value);
}

const STRONG_ETAG = /^"[\x21\x23-\x7e\x80-\xff]*"$/;

/** The ETag of an image: its SHA-256 in hex as a strong entity-tag (DEVICE_API.md). */
export function imageEtag(sha256Hex: string): string {
  return `"${sha256Hex}"`;
}

/**
 * Whether the Range may be honoured under If-Range (RFC 9110 §13.1.5): true when there is no If-Range,
 * or when it is an entity-tag that matches `etag` by strong comparison (§8.8.3.2: neither is weak and
 * the opaque tags are identical character by character). A weak tag (`W/"…"`) never matches. An
 * HTTP-date never matches either: we send no Last-Modified, so a date cannot be a validator we gave
 * out, and §13.1.5 then requires the whole representation. Anything else (empty, malformed) does not
 * match, so the logger gets the whole image, which is always safe.
 */
export function ifRangeMatches(ifRange: string | null | undefined, etag: string): boolean {
  if (ifRange === undefined || ifRange === null) return true;
  const tag = ifRange.trim();
  return STRONG_ETAG.test(tag) && STRONG_ETAG.test(etag) && tag === etag;
}

/** `Content-Range` of a 206 (RFC 9110 §14.4): `bytes <start>-<end>/<size>`, positions inclusive. */
export function contentRange(start: number, end: number, size: number): string {
  return `bytes ${start}-${end}/${size}`;
}

/** `Content-Range` of a 416 (RFC 9110 §14.4, §15.5.17): `bytes *\/<size>`. */
export function unsatisfiedRange(size: number): string {
  return `bytes */${size}`;
}
