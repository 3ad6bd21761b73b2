// Logger labels: a PNG with the enrollment QR and, beside it, the serial and model in plain text, so the
// image alone is a complete label whether it is printed from the sheet or saved from the registration screen.
// The server keeps only token digests, so a label can be drawn only at the moment its token is issued.
import { deflateSync, crc32 } from 'node:zlib';
import { create as createQr } from 'qrcode';
import { GLYPH_HEIGHT, GLYPH_WIDTH, glyphFor } from './label-font';
import { LABEL_QR_ERROR_CORRECTION } from '../../lib/label-sheet';

export type LabelText = { serial: string; modelName: string; board?: string };

/** Pixels per QR module: about 0.5 mm per module when the label is printed 34 mm high, easy for phone cameras. */
const MODULE_PX = 6;
/** The QR code standard asks for a light margin of 4 modules around the symbol. */
const QUIET_MODULES = 4;
/** Text area width as a share of the QR's: the whole image then has the 63.5 × 33.9 mm label's shape. */
const TEXT_AREA_SHARE = 0.87;
const INK = 0;
const PAPER = 255;

/**
 * The label as a PNG data URL: QR (error correction Q, see LABEL_QR_ERROR_CORRECTION) on the left, the
 * serial in large type and the model name (and board revision, when given) beside it. The text uses a small
 * built-in upper-case bitmap font: lower case prints in capitals, and characters it lacks print as "?".
 */
export function labelPng(link: string, text: LabelText): string {
  const qr = createQr(link, { errorCorrectionLevel: LABEL_QR_ERROR_CORRECTION });
  const modules = qr.modules.size;
  const qrPx = (modules + 2 * QUIET_MODULES) * MODULE_PX;
  const textPx = Math.round(qrPx * TEXT_AREA_SHARE);
  const image = new Grey(qrPx + textPx, qrPx);

  for (let row = 0; row < modules; row++) {
    for (let col = 0; col < modules; col++) {
      if (qr.modules.get(row, col)) {
        image.fillRect((QUIET_MODULES + col) * MODULE_PX, (QUIET_MODULES + row) * MODULE_PX, MODULE_PX, MODULE_PX);
      }
    }
  }

  // The QR's right quiet zone separates it from the text; keep a margin of 2 modules on the far right.
  const left = qrPx;
  const width = textPx - 2 * MODULE_PX;
  const serial = fitSerial(text.serial.trim(), width);
  const details = [text.modelName.trim(), text.board ? `BOARD ${text.board.trim()}` : '']
    .filter(Boolean)
    .flatMap((part) => wrapWords(part, charsPerLine(width, 2)));
  const detailLines = details.slice(0, 4);
  if (details.length > detailLines.length) detailLines[3] = ellipsize(detailLines[3], charsPerLine(width, 2));

  const serialHeight = serial.lines.length * lineHeight(serial.scale) - 2 * serial.scale;
  const gap = 3 * MODULE_PX;
  const detailHeight = detailLines.length * lineHeight(2) - 4;
  let y = Math.max(MODULE_PX, Math.round((qrPx - serialHeight - gap - detailHeight) / 2));
  for (const line of serial.lines) {
    image.text(line, left, y, serial.scale);
    y += lineHeight(serial.scale);
  }
  y += gap - 2 * serial.scale;
  for (const line of detailLines) {
    image.text(line, left, y, 2);
    y += lineHeight(2);
  }
  return `data:image/png;base64,${image.png().toString('base64')}`;
}

// ─── Text layout ────────────────────────────────────────────────────────────

const advance = (scale: number) => (GLYPH_WIDTH + 1) * scale;
const lineHeight = (scale: number) => (GLYPH_HEIGHT + 2) * scale;
const charsPerLine = (widthPx: number, scale: number) => Math.max(1, Math.floor((widthPx + scale) / advance(scale)));

/** The serial as large as fits on one line; very long serials wrap at the smallest size. */
function fitSerial(serial: string, widthPx: number): { scale: number; lines: string[] } {
  for (const scale of [4, 3, 2]) {
    if (serial.length <= charsPerLine(widthPx, scale)) return { scale, lines: [serial] };
  }
  const per = charsPerLine(widthPx, 2);
  const lines: string[] = [];
  for (let i = 0; i < serial.length; i += per) lines.push(serial.slice(i, i + per));
  return { scale: 2, lines };
}

function wrapWords(text: string, per: number): string[] {
  const lines: string[] = [];
  let current = '';
  for (const word of text.split(/\s+/).filter(Boolean)) {
    for (let piece = word; piece.length > 0; piece = piece.slice(per)) {
      const part = piece.slice(0, per);
      if (current === '') current = part;
      else if (current.length + 1 + part.length <= per) current += ` ${part}`;
      else {
        lines.push(current);
        current = part;
      }
    }
  }
  if (current) lines.push(current);
  return lines;
}

function ellipsize(line: string, per: number): string {
  return `${line.slice(0, Math.max(0, per - 3)).trimEnd()}...`;
}

// ─── A minimal 8-bit greyscale PNG (W3C PNG specification) ─────────────────

class Grey {
  readonly pixels: Uint8Array;
  constructor(
    readonly width: number,
    readonly height: number,
  ) {
    this.pixels = new Uint8Array(width * height).fill(PAPER);
  }

  fillRect(x: number, y: number, w: number, h: number): void {
    for (let row = Math.max(0, y); row < Math.min(this.height, y + h); row++) {
      this.pixels.fill(INK, row * this.width + Math.max(0, x), row * this.width + Math.min(this.width, x + w));
    }
  }

  text(line: string, x: number, y: number, scale: number): void {
    [...line].forEach((character, i) => {
      const glyph = glyphFor(character);
      glyph.forEach((bits, gy) => {
        for (let gx = 0; gx < GLYPH_WIDTH; gx++) {
          if (bits[gx] === '#') this.fillRect(x + i * advance(scale) + gx * scale, y + gy * scale, scale, scale);
        }
      });
    });
  }

  png(): Buffer {
    // Each scanline is prefixed with filter type 0 (None); deflate does well enough on flat label art.
    const raw = Buffer.alloc((this.width + 1) * this.height);
    for (let row = 0; row < this.height; row++) {
      raw.set(this.pixels.subarray(row * this.width, (row + 1) * this.width), row * (this.width + 1) + 1);
    }
    const header = Buffer.alloc(13);
    header.writeUInt32BE(this.width, 0);
    header.writeUInt32BE(this.height, 4);
    header.set([8, 0, 0, 0, 0], 8); // bit depth 8, colour type 0 (greyscale), deflate, adaptive filtering, no interlace
    return Buffer.concat([
      Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]),
      chunk('IHDR', header),
      chunk('IDAT', deflateSync(raw, { level: 9 })),
      chunk('IEND', Buffer.alloc(0)),
    ]);
  }
}

function chunk(type: string, data: Buffer): Buffer {
  const length = Buffer.alloc(4);
  length.writeUInt32BE(data.length, 0);
  const typeAndData = Buffer.concat([Buffer.from(type, 'ascii'), data]);
  const crc = Buffer.alloc(4);
  crc.writeUInt32BE(crc32(typeAndData) >>> 0, 0);
  return Buffer.concat([length, typeAndData, crc]);
}
