import { canonicalJson, canonicalManifest, ManifestError, parseSignedManifest } from '../../server/images/manifest';

// A manifest for the FL-2 field logger of the demo scenario (PRODUCT.md); the digest is SHA-256("abc"),
// FIPS 180-4 / NIST one-block example (docs/SOURCES.md §3), standing in for an image.
const fl2Model = '6f1c2a3e-9b4d-4c1e-8a7f-2d3b4c5d6e7f';
const abcDigest = 'ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad';
const manifest = {
  board_revisions: ['B', 'C'],
  format: 1,
  image_sha256: abcDigest,
  image_size: 123456,
  issued_at: '2026-11-30T10:00:00Z',
  model: fl2Model,
  security_counter: 5,
  version: '2.4.0',
} as const;

// The example of DEVICE_API.md "The signed manifest", with its placeholders filled in: it is written
// in canonical form there, so it is the expected byte string.
const documented = `{"board_revisions":["B","C"],"format":1,"image_sha256":"${abcDigest}","image_size":123456,"issued_at":"2026-11-30T10:00:00Z","model":"${fl2Model}","security_counter":5,"version":"2.4.0"}`;

function refusal(run: () => unknown): ManifestError {
  try {
    run();
  } catch (error) {
    if (error instanceof ManifestError) return error;
    throw error;
  }
  throw new Error('expected a ManifestError, but nothing was thrown');
}

const bytes = (text: string) => Buffer.from(text, 'utf8');

describe('RFC 8785 canonical JSON', () => {
  test('when the RFC 8785 §3.2.2 sample is canonicalized, then numbers, strings and literals come out as the RFC prints them', () => {
    // Source: RFC 8785 §3.2.2 example input and its canonical output (also the canonicalize package's testdata/values.json).
    const input = JSON.parse(
      '{"numbers": [333333333.33333329, 1E30, 4.50, 2e-3, 0.000000000000000000000000001], ' +
        '"string": "\\u20ac$\\u000F\\u000aA\'\\u0042\\u0022\\u005c\\\\\\"\\/", "literals": [null, true, false]}',
    );
    expect(canonicalJson(input)).toBe(
      '{"literals":[null,true,false],"numbers":[333333333.3333333,1e+30,4.5,0.002,1e-27],"string":"€$\\u000f\\nA\'B\\"\\\\\\\\\\"/"}',
    );
  });

  test('when the RFC 8785 §3.2.3 sample is canonicalized, then members are sorted by UTF-16 code units', () => {
    // Source: RFC 8785 §3.2.3 "Sorting of Object Properties": the emoji (surrogates D83D DE00) sorts before U+FB33.
    const input = JSON.parse(
      '{"\\u20ac": "Euro Sign", "\\r": "Carriage Return", "\\ufb33": "Hebrew Letter Dalet With Dagesh", "1": "One", ' +
        '"\\ud83d\\ude00": "Emoji: Grinning Face", "\\u0080": "Control", "\\u00f6": "Latin Small Letter O With Diaeresis"}',
    );
    const text = canonicalJson(input);
    // Read the order from the text: a parsed object would list the integer-like key "1" first anyway.
    const order = [...text.matchAll(/":"([^"]+)"/g)].map((m) => m[1]);
    expect(order).toEqual(['Carriage Return', 'One', 'Control', 'Latin Small Letter O With Diaeresis', 'Euro Sign', 'Emoji: Grinning Face', 'Hebrew Letter Dalet With Dagesh']);
    expect(text).toBe(
      '{"\\r":"Carriage Return","1":"One","\u0080":"Control","ö":"Latin Small Letter O With Diaeresis","€":"Euro Sign",' +
        '"😀":"Emoji: Grinning Face","\ufb33":"Hebrew Letter Dalet With Dagesh"}',
    );
  });

  // Source: RFC 8785 Appendix B "Number Serialization Samples" (IEEE 754 bits → JCS text); the same table
  // is quoted in several public JCS test suites, which agree with each other and with these values.
  const appendixB: [string, string][] = [
    ['0000000000000000', '0'],
    ['8000000000000000', '0'],
    ['0000000000000001', '5e-324'],
    ['8000000000000001', '-5e-324'],
    ['7fefffffffffffff', '1.7976931348623157e+308'],
    ['ffefffffffffffff', '-1.7976931348623157e+308'],
    ['4340000000000000', '9007199254740992'],
    ['c340000000000000', '-9007199254740992'],
    ['4430000000000000', '295147905179352830000'],
    ['44b52d02c7e14af5', '9.999999999999997e+22'],
    ['44b52d02c7e14af6', '1e+23'],
    ['44b52d02c7e14af7', '1.0000000000000001e+23'],
    ['444b1ae4d6e2ef4e', '999999999999999700000'],
    ['444b1ae4d6e2ef4f', '999999999999999900000'],
    ['444b1ae4d6e2ef50', '1e+21'],
    ['3eb0c6f7a0b5ed8c', '9.999999999999997e-7'],
    ['3eb0c6f7a0b5ed8d', '0.000001'],
    ['41b3de4355555553', '333333333.3333332'],
    ['41b3de4355555554', '333333333.33333325'],
    ['41b3de4355555555', '333333333.3333333'],
    ['41b3de4355555556', '333333333.3333334'],
    ['41b3de4355555557', '333333333.33333343'],
    ['becbf647612f3696', '-0.0000033333333333333333'],
    ['43143ff3c1cb0959', '1424953923781206.2'],
  ];
  test.each(appendixB)('when the IEEE 754 value %s is canonicalized, then it reads %s (RFC 8785 Appendix B)', (bits, expected) => {
    const value = Buffer.from(bits, 'hex').readDoubleBE(0);
    expect(canonicalJson(value)).toBe(expected);
    expect(canonicalJson({ n: [value] })).toBe(`{"n":[${expected}]}`);
  });

  test('when a value is NaN or Infinity, then canonicalization refuses it (RFC 8785 §3.2.2.3)', () => {
    expect(refusal(() => canonicalJson({ n: Number.NaN })).field).toBe('manifest');
    expect(refusal(() => canonicalJson([Number.POSITIVE_INFINITY])).field).toBe('manifest');
  });
});

describe('canonical manifest', () => {
  test('when a manifest is written, then it is byte for byte the DEVICE_API.md example form', () => {
    expect(canonicalManifest(manifest)).toBe(documented);
    const shuffled = Object.fromEntries(Object.entries(manifest).reverse());
    expect(canonicalManifest(shuffled)).toBe(documented);
  });

  test('when canonical manifest bytes are read, then the typed manifest comes back', () => {
    expect(parseSignedManifest(bytes(documented))).toEqual(manifest);
    expect(parseSignedManifest(new Uint8Array(bytes(documented)))).toEqual(manifest);
  });

  const notCanonical: [string, string][] = [
    ['pretty-printed with spaces and newlines', JSON.stringify(manifest, null, 2)],
    ['a space after each colon', documented.replace(/":/g, '": ')],
    ['keys in another order', JSON.stringify(Object.fromEntries(Object.entries(manifest).reverse()))],
    ['a trailing newline', `${documented}\n`],
    ['a UTF-8 byte order mark', `\ufeff${documented}`],
    ['a number written as 5.0', documented.replace('"security_counter":5', '"security_counter":5.0')],
    ['a letter written as a \\u escape', documented.replace('["B","C"]', '["\\u0042","C"]')],
    ['a duplicated member', documented.replace('"format":1,', '"format":1,"format":1,')],
  ];
  test.each(notCanonical)('when the manifest has %s, then it is refused as not canonical (RFC 8785 §3.2)', (_what, text) => {
    const error = refusal(() => parseSignedManifest(bytes(text)));
    expect(error.code).toBe('not_canonical');
    expect(error.field).toBe('manifest');
    expect(error.message).toMatch(/not in RFC 8785 canonical form.*heliodor manifest/);
  });

  test('when the bytes are not JSON, then the refusal says so, distinct from non-canonical JSON', () => {
    for (const text of ['', 'manifest', documented.slice(0, -1), '{"format":1,}']) {
      const error = refusal(() => parseSignedManifest(bytes(text)));
      expect(error.code).toBe('not_json');
      expect(error.message).toMatch(/^the manifest (is not JSON|is empty)/);
    }
    expect(refusal(() => parseSignedManifest(Buffer.from([0x7b, 0xff, 0x7d]))).code).toBe('not_utf8');
  });

  const fieldCases: [string, string, Record<string, unknown>, RegExp][] = [
    ['a version with a leading v', 'manifest.version', { version: 'v2.4.0' }, /2\.4\.0 is a semantic version; 'v2\.4\.0' has a leading v/],
    ['a version with a leading zero', 'manifest.version', { version: '01.2.3' }, /leading zero/],
    ['an upper-case digest', 'manifest.image_sha256', { image_sha256: abcDigest.toUpperCase() }, /64 lowercase hex/],
    ['a short digest', 'manifest.image_sha256', { image_sha256: abcDigest.slice(2) }, /64 lowercase hex/],
    ['no board revisions', 'manifest.board_revisions', { board_revisions: [] }, /at least one/],
    ['a board revision named twice', 'manifest.board_revisions', { board_revisions: ['B', 'B'] }, /twice/],
    ['a blank board revision', 'manifest.board_revisions.1', { board_revisions: ['B', ' '] }, /board revision label/],
    ['format 2', 'manifest.format', { format: 2 }, /must be 1/],
    ['an empty image', 'manifest.image_size', { image_size: 0 }, /at least 1 byte/],
    ['a fractional image size', 'manifest.image_size', { image_size: 10.5 }, /whole number/],
    ['a negative security counter', 'manifest.security_counter', { security_counter: -1 }, /0 or more/],
    ['a security counter as text', 'manifest.security_counter', { security_counter: '5' }, /security counter/],
    ['an issue time with an offset', 'manifest.issued_at', { issued_at: '2026-11-30T11:00:00+01:00' }, /RFC 3339 UTC/],
    ['an issue time on 30 February', 'manifest.issued_at', { issued_at: '2026-02-30T10:00:00Z' }, /RFC 3339 UTC/],
    ['an upper-case model id', 'manifest.model', { model: fl2Model.toUpperCase() }, /lowercase UUID/],
    ['a missing version', 'manifest.version', { version: undefined }, /is missing/],
    ['a field the format does not define', 'manifest', { rollout: 'all' }, /does not define: rollout/],
  ];
  test.each(fieldCases)('when the manifest has %s, then the refusal names %s', (_what, path, change, message) => {
    const text = canonicalJson({ ...manifest, ...change });
    const error = refusal(() => parseSignedManifest(bytes(text)));
    expect(error.code).toBe('invalid_fields');
    expect(error.errors).toContainEqual({ path, message: expect.stringMatching(message) });
    expect(error.message).toContain(path);
    // The same check guards the writing side.
    expect(refusal(() => canonicalManifest({ ...manifest, ...change })).errors).toEqual(error.errors);
  });

  test('when the manifest is a JSON array, then the refusal names the manifest itself', () => {
    const error = refusal(() => parseSignedManifest(bytes('[1]')));
    expect(error.code).toBe('invalid_fields');
    expect(error.errors).toEqual([{ path: 'manifest', message: 'must be a JSON object with the manifest fields' }]);
  });
});
