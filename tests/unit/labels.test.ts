import jsQR from 'jsqr';
import { PNG } from 'pngjs';
import { labelPng } from '../../server/loggers/labels';
import { enrollmentLink, labelSheetLayout, LABEL_QR_ERROR_CORRECTION } from '../../lib/label-sheet';

// Reference decoders: jsqr (a general-purpose QR decoder) and pngjs (a general-purpose PNG decoder, CRCs checked).
const origin = 'https://console.fernhollow.example';
const token = 'hlt_q3R8vX0_kT2mW9-bN4cY7pL1sD6fH5jG0aZ3eU8iO2w'; // hlt_ + 43 base64url characters (DEVICE_API.md)

function readPng(dataUrl: string) {
  expect(dataUrl.startsWith('data:image/png;base64,')).toBe(true);
  return PNG.sync.read(Buffer.from(dataUrl.slice('data:image/png;base64,'.length), 'base64'));
}

function decodeQr(png: PNG) {
  const result = jsQR(new Uint8ClampedArray(png.data), png.width, png.height);
  if (!result) throw new Error('jsqr found no QR code in the label');
  return result;
}

const darkAt = (png: PNG, x: number, y: number) => png.data[(Math.floor(y) * png.width + Math.floor(x)) * 4] < 128;

/**
 * The error correction level, read from the PNG's format information (ISO/IEC 18004, from memory: 15 bits
 * around the top-left finder and again split between the other two; XOR mask 101010000010010; BCH(15,5) with
 * generator 10100110111; the first two data bits are the level: 01 L, 00 M, 11 Q, 10 H).
 */
function errorCorrectionLevelOf(png: PNG): string {
  const { location, version } = decodeQr(png);
  const size = 4 * version + 17;
  const module = (location.topRightCorner.x - location.topLeftCorner.x) / size;
  const dark = (row: number, col: number) =>
    darkAt(png, location.topLeftCorner.x + (col + 0.5) * module, location.topLeftCorner.y + (row + 0.5) * module) ? 1 : 0;
  const first: Array<[number, number]> = [
    [8, 0], [8, 1], [8, 2], [8, 3], [8, 4], [8, 5], [8, 7], [8, 8], [7, 8], [5, 8], [4, 8], [3, 8], [2, 8], [1, 8], [0, 8],
  ];
  const second: Array<[number, number]> = [
    ...Array.from({ length: 7 }, (_, i): [number, number] => [size - 1 - i, 8]),
    ...Array.from({ length: 8 }, (_, i): [number, number] => [8, size - 8 + i]),
  ];
  const read = (cells: Array<[number, number]>) => cells.reduce((bits, [r, c]) => (bits << 1) | dark(r, c), 0) ^ 0b101010000010010;
  const format = read(first);
  expect(read(second)).toBe(format);
  // The 10 low bits must be the BCH remainder of the 5 data bits.
  let remainder = (format >> 10) << 10;
  for (let bit = 14; bit >= 10; bit--) if (remainder & (1 << bit)) remainder ^= 0b10100110111 << (bit - 10);
  expect(format & 0x3ff).toBe(remainder);
  return ({ 0b01: 'L', 0b00: 'M', 0b11: 'Q', 0b10: 'H' } as Record<number, string>)[format >> 13];
}

describe('enrollment link', () => {
  test('when a token is issued, then the link is <origin>/enroll?t=<token> and a URL parser (WHATWG URL) reads the token back', () => {
    const link = enrollmentLink(origin, token);
    expect(link).toBe(`${origin}/enroll?t=${token}`);
    const url = new URL(link);
    expect(url.pathname).toBe('/enroll');
    expect(url.searchParams.get('t')).toBe(token);
  });

  test('when the origin ends in a slash or the token holds reserved characters, then the link is still exact and percent-encoded (RFC 3986)', () => {
    expect(enrollmentLink(`${origin}/`, token)).toBe(`${origin}/enroll?t=${token}`);
    const odd = 'a b&c=d/e+f?';
    const link = enrollmentLink(origin, odd);
    expect(link).toBe(`${origin}/enroll?t=a%20b%26c%3Dd%2Fe%2Bf%3F`);
    expect(new URL(link).searchParams.get('t')).toBe(odd);
  });

  test('when the origin is not an http(s) URL, then no link is made', () => {
    expect(() => enrollmentLink('console.fernhollow.example', token)).toThrow(TypeError);
    expect(() => enrollmentLink('ftp://console.fernhollow.example', token)).toThrow(TypeError);
  });
});

describe('logger label PNG', () => {
  const link = enrollmentLink(origin, token);
  const label = readPng(labelPng(link, { serial: 'FL2-AV-00017', modelName: 'FL-2 field logger', board: 'B' }));

  test('when a label is drawn, then a reference QR decoder (jsqr) reads exactly the enrollment link from the PNG', () => {
    expect(decodeQr(label).data).toBe(link);
  });

  test('when a label is drawn, then its QR carries error correction M or higher (Q, for labels outdoors)', () => {
    const level = errorCorrectionLevelOf(label);
    expect(['M', 'Q', 'H']).toContain(level);
    expect(level).toBe(LABEL_QR_ERROR_CORRECTION);
  });

  test('when a label is drawn, then the text sits beside the QR, outside its 4-module quiet zone (ISO/IEC 18004), and inside the image', () => {
    const { location, version } = decodeQr(label);
    const module = (location.topRightCorner.x - location.topLeftCorner.x) / (4 * version + 17);
    const textFrom = Math.ceil(location.topRightCorner.x + 4 * module);
    expect(label.width).toBeGreaterThan(textFrom);
    let inkBeside = 0;
    let inkInQuietZone = 0;
    for (let y = 0; y < label.height; y++) {
      for (let x = Math.floor(location.topRightCorner.x); x < label.width; x++) {
        if (!darkAt(label, x, y)) continue;
        if (x >= textFrom) inkBeside++;
        else inkInQuietZone++;
      }
    }
    expect(inkBeside).toBeGreaterThan(0);
    expect(inkInQuietZone).toBe(0);
  });

  test('when only the serial differs, then only the text area differs and long text stays inside the label', () => {
    const other = readPng(labelPng(link, { serial: 'FL2-AV-00018', modelName: 'FL-2 field logger', board: 'B' }));
    const { location } = decodeQr(label);
    let differsInQr = false;
    let differsBeside = false;
    for (let y = 0; y < label.height; y++) {
      for (let x = 0; x < label.width; x++) {
        if (darkAt(label, x, y) === darkAt(other, x, y)) continue;
        if (x < location.topRightCorner.x) differsInQr = true;
        else differsBeside = true;
      }
    }
    expect(differsInQr).toBe(false);
    expect(differsBeside).toBe(true);

    const long = readPng(
      labelPng(link, {
        serial: 'fl2.aldmere-vale_pump-house-000000000017',
        modelName: 'FL-2 field logger for the Aldmere Vale pump houses, village halls and telecom huts',
      }),
    );
    expect(decodeQr(long).data).toBe(link);
    for (let y = 0; y < long.height; y++) {
      expect(darkAt(long, long.width - 1, y)).toBe(false);
      expect(darkAt(long, long.width - 2, y)).toBe(false);
    }
  });
});

describe('label sheet layout', () => {
  // A4 is 210 × 297 mm (ISO 216); 3 × 8 = 24 labels per sheet is common practice.
  const A4 = { width: 210, height: 297 };
  const printerMarginMm = 5; // common practice: most printers cannot print the outer few millimetres

  test('when 24 labels are laid out, then they fill one A4 page in 3 columns × 8 rows inside the printable margins, without overlapping', () => {
    const layout = labelSheetLayout(24);
    expect(layout.pageCount).toBe(1);
    expect(layout.cells).toHaveLength(24);
    expect(new Set(layout.cells.map((c) => c.column)).size).toBe(3);
    expect(new Set(layout.cells.map((c) => c.row)).size).toBe(8);
    for (const c of layout.cells) {
      expect(c.xMm).toBeGreaterThanOrEqual(printerMarginMm);
      expect(c.yMm).toBeGreaterThanOrEqual(printerMarginMm);
      expect(c.xMm + c.widthMm).toBeLessThanOrEqual(A4.width - printerMarginMm);
      expect(c.yMm + c.heightMm).toBeLessThanOrEqual(A4.height - printerMarginMm);
    }
    for (const a of layout.cells) {
      for (const b of layout.cells) {
        if (a === b) continue;
        const apart =
          a.xMm + a.widthMm <= b.xMm + 1e-9 || b.xMm + b.widthMm <= a.xMm + 1e-9 || a.yMm + a.heightMm <= b.yMm + 1e-9 || b.yMm + b.heightMm <= a.yMm + 1e-9;
        expect(apart).toBe(true);
      }
    }
    // Centred on the page.
    const right = Math.max(...layout.cells.map((c) => c.xMm + c.widthMm));
    const bottom = Math.max(...layout.cells.map((c) => c.yMm + c.heightMm));
    expect(A4.width - right).toBeCloseTo(layout.cells[0].xMm, 6);
    expect(A4.height - bottom).toBeCloseTo(layout.cells[0].yMm, 6);
  });

  test('when 40 labels are laid out (journey 1), then the 25th starts page 2 at the top left and labels run left to right, top to bottom', () => {
    const layout = labelSheetLayout(40);
    expect(layout.pageCount).toBe(2);
    const [first, second, , fourth] = layout.cells;
    expect(second.xMm).toBeGreaterThan(first.xMm);
    expect(second.yMm).toBe(first.yMm);
    expect(fourth).toMatchObject({ row: 1, column: 0, xMm: first.xMm });
    expect(layout.cells[24]).toMatchObject({ page: 1, row: 0, column: 0, xMm: first.xMm, yMm: first.yMm });
    expect(layout.cells[39]).toMatchObject({ page: 1, row: 5, column: 0 });
  });

  test('when no labels or a bad count are given, then the layout is empty or refused', () => {
    expect(labelSheetLayout(0)).toMatchObject({ pageCount: 0, cells: [] });
    expect(() => labelSheetLayout(-1)).toThrow(RangeError);
    expect(() => labelSheetLayout(2.5)).toThrow(RangeError);
  });
});
