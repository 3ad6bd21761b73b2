import { contentRange, ifRangeMatches, imageEtag, parseRange, unsatisfiedRange } from '../../server/device-api/ranges';

// Source: RFC 9110 (docs/SOURCES.md §10). §14.1.2 examples are on a representation of length 10000.
const SIZE = 10_000;

describe('Range header', () => {
  test.each([
    // RFC 9110 §14.1.2: "The first 500 bytes"
    { header: 'bytes=0-499', start: 0, end: 499 },
    // "The second 500 bytes"
    { header: 'bytes=500-999', start: 500, end: 999 },
    // "The final 500 bytes" (suffix) — both forms
    { header: 'bytes=-500', start: 9500, end: 9999 },
    { header: 'bytes=9500-', start: 9500, end: 9999 },
    // §14.1.2: a last-pos at or past the end is replaced by length − 1
    { header: 'bytes=9500-20000', start: 9500, end: 9999 },
    { header: 'bytes=0-9999', start: 0, end: 9999 },
    // §14.1.2: a suffix longer than the representation means the whole representation
    { header: 'bytes=-20000', start: 0, end: 9999 },
    { header: 'bytes=0-0', start: 0, end: 0 },
    { header: 'bytes=9999-', start: 9999, end: 9999 },
    // §14.1: range unit names are case-insensitive
    { header: 'Bytes=0-499', start: 0, end: 499 },
    // §5.6.1 lists: optional whitespace around elements, empty elements ignored
    { header: 'bytes= 0-499 ', start: 0, end: 499 },
    { header: '  bytes=0-499,', start: 0, end: 499 },
    { header: 'bytes=, ,0-499', start: 0, end: 499 },
    // leading zeros are digits like any other (1*DIGIT)
    { header: 'bytes=0010-0019', start: 10, end: 19 },
    // §14.1.2 overflow guard: a last-pos too large for any integer type is clamped, not wrapped
    { header: 'bytes=100-99999999999999999999999999', start: 100, end: 9999 },
    { header: 'bytes=-99999999999999999999999999', start: 0, end: 9999 },
  ])('when Range is "$header", then bytes $start–$end are sent with 206', ({ header, start, end }) => {
    expect(parseRange(header, SIZE)).toEqual({ kind: 'single', start, end });
  });

  test.each([
    // RFC 9110 §14.1.2: "The first and last bytes only"
    'bytes=0-0,-1',
    // §14.1.2: "Other valid (but not canonical) specifications of the second 500 bytes"
    'bytes=500-600,601-999',
    'bytes=500-700,601-999',
    // one satisfiable range among unsatisfiable ones still is a multi-range request
    'bytes=0-10,20000-',
  ])('when Range is "%s", then it is a multi-range request (the whole image with 200, as DEVICE_API.md allows)', (header) => {
    expect(parseRange(header, SIZE)).toEqual({ kind: 'multiple' });
  });

  test.each([
    // §14.1.2: an int-range is satisfiable only when first-pos < length
    'bytes=10000-',
    'bytes=10000-10001',
    'bytes=20000-30000',
    // §14.1.2: a suffix-range needs a non-zero suffix-length
    'bytes=-0',
    // none of several ranges satisfiable (§15.5.17)
    'bytes=10000-,-0',
    // overflow guard: a first-pos too large for any integer type lies past the end
    'bytes=99999999999999999999999999-',
  ])('when Range is "%s", then it is unsatisfiable (416 with bytes */10000)', (header) => {
    expect(parseRange(header, SIZE)).toEqual({ kind: 'unsatisfiable' });
  });

  test.each([
    undefined,
    null,
    '',
    // §14.2: "An origin server MUST ignore a Range header field that contains a range unit it does not understand."
    'items=0-5',
    'pages=1-2',
    // malformed: §14.2 lets a server ignore an invalid ranges-specifier; the whole image is always correct
    '0-499',
    'bytes',
    'bytes=',
    'bytes=,',
    'bytes=-',
    'bytes=abc',
    'bytes=0 - 499',
    'bytes=+5-9',
    'bytes=0x10-0x20',
    'bytes=1.5-3',
    'bytes=0-1;q=1',
    // §14.1.1: last-pos below first-pos makes the ranges-specifier invalid
    'bytes=500-499',
    'bytes=0-1,5-3',
    'bytes==0-1',
  ])('when Range is %p, then it is ignored and the whole image is sent with 200', (header) => {
    expect(parseRange(header, SIZE)).toEqual({ kind: 'none' });
  });

  test('when the image is empty, then an int-range is unsatisfiable and a suffix gets the whole (empty) image', () => {
    // §14.1.2: with zero length, only a suffix-range with a non-zero length is satisfiable; a 206 cannot carry an empty range.
    expect(parseRange('bytes=0-', 0)).toEqual({ kind: 'unsatisfiable' });
    expect(parseRange('bytes=-1', 0)).toEqual({ kind: 'none' });
  });

  test('when a download is resumed at any offset, then the range runs from that offset to the last byte', () => {
    for (const received of [0, 1, 4095, 4096, 9998, 9999]) {
      expect(parseRange(`bytes=${received}-`, SIZE)).toEqual({ kind: 'single', start: received, end: SIZE - 1 });
    }
  });
});

describe('Content-Range', () => {
  test('when a single part is sent, then Content-Range reads as in RFC 9110 §14.4 and §15.3.7', () => {
    expect(contentRange(42, 1233, 1234)).toBe('bytes 42-1233/1234');
    expect(contentRange(734, 1233, 1234)).toBe('bytes 734-1233/1234');
    // §15.3.7: "Content-Range: bytes 21010-47021/47022"
    expect(contentRange(21010, 47021, 47022)).toBe('bytes 21010-47021/47022');
  });

  test('when a range is unsatisfiable, then Content-Range reads as in RFC 9110 §14.4 and §15.5.17', () => {
    expect(unsatisfiedRange(1234)).toBe('bytes */1234');
    expect(unsatisfiedRange(47022)).toBe('bytes */47022');
  });

  test('when the RFC examples are parsed, then their Content-Range is the one the RFC shows', () => {
    const r = parseRange('bytes=-500', SIZE);
    expect(r.kind === 'single' && contentRange(r.start, r.end, SIZE)).toBe('bytes 9500-9999/10000');
  });
});

describe('If-Range', () => {
  const sha = 'ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad'; // SHA-256("abc"), FIPS 180-4 (docs/SOURCES.md §3)
  const etag = imageEtag(sha);

  test('when the image ETag is built, then it is the SHA-256 hex as a strong entity-tag (DEVICE_API.md)', () => {
    expect(etag).toBe(`"${sha}"`);
  });

  test.each([
    // RFC 9110 §8.8.3.2 comparison table, strong column
    { ifRange: 'W/"1"', etag: 'W/"1"', match: false },
    { ifRange: 'W/"1"', etag: 'W/"2"', match: false },
    { ifRange: 'W/"1"', etag: '"1"', match: false },
    { ifRange: '"1"', etag: '"1"', match: true },
  ])('when If-Range is $ifRange and the ETag $etag, then strong comparison gives $match', ({ ifRange, etag: tag, match }) => {
    expect(ifRangeMatches(ifRange, tag)).toBe(match);
  });

  test.each([
    { ifRange: `"${sha}"`, match: true },
    { ifRange: ` "${sha}" `, match: true },
    { ifRange: `W/"${sha}"`, match: false },
    { ifRange: `"${sha.toUpperCase()}"`, match: false },
    { ifRange: sha, match: false },
    { ifRange: '"e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"', match: false },
    // §13.1.5 allows an HTTP-date; we send no Last-Modified, so a date never validates
    { ifRange: 'Sun, 06 Nov 1994 08:49:37 GMT', match: false },
    { ifRange: '', match: false },
    { ifRange: `"${sha}", "${sha}"`, match: false },
  ])('when If-Range is $ifRange, then the range is honoured: $match', ({ ifRange, match }) => {
    expect(ifRangeMatches(ifRange, etag)).toBe(match);
  });

  test('when there is no If-Range, then the Range stands', () => {
    expect(ifRangeMatches(undefined, etag)).toBe(true);
    expect(ifRangeMatches(null, etag)).toBe(true);
  });
});
