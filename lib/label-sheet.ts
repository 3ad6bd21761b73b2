// Logger labels, the parts the client needs too: the enrollment link a label encodes and the printable
// sheet layout. Pure and free of server-only imports, because after a batch the browser draws the labels
// itself from the tokens it was handed once.

/**
 * QR error correction for labels: Q (about 25 % of the code may be lost) rather than M (about 15 %), because
 * labels live on enclosures outdoors and get scratched, dusty and sun-faded. H would make the code denser for
 * little gain at our link length. (Recovery shares from memory of the QR code standard.)
 */
export const LABEL_QR_ERROR_CORRECTION = 'Q' as const;

/** `<origin>/enroll?t=<token>`: the link a logger label's QR encodes; a phone camera opens the Enroll screen with it. */
export function enrollmentLink(origin: string, token: string): string {
  let url: URL;
  try {
    url = new URL(origin);
  } catch {
    throw new TypeError(`the console origin must be an absolute http(s) URL, got "${origin}"`);
  }
  if (url.protocol !== 'https:' && url.protocol !== 'http:') {
    throw new TypeError(`the console origin must be an http(s) URL, got "${origin}"`);
  }
  if (token === '') throw new TypeError('the token is empty');
  return `${origin.replace(/\/+$/, '')}/enroll?t=${encodeURIComponent(token)}`;
}

// ─── Printable sheet ────────────────────────────────────────────────────────

/**
 * A4 (210 × 297 mm, ISO 216) with 3 × 8 = 24 labels of 63.5 × 33.9 mm, 2.5 mm between columns and none
 * between rows, centred: the usual 24-up label stock (common practice; sizes from memory). The margins
 * (7.25 mm at the sides, 12.9 mm top and bottom) stay outside the area most printers cannot reach.
 */
export const labelSheet = {
  pageWidthMm: 210,
  pageHeightMm: 297,
  columns: 3,
  rows: 8,
  labelWidthMm: 63.5,
  labelHeightMm: 33.9,
  columnGapMm: 2.5,
  rowGapMm: 0,
} as const;

export type LabelCell = {
  /** Position of the label in the list given, from 0. */
  index: number;
  /** Page, from 0. */
  page: number;
  row: number;
  column: number;
  xMm: number;
  yMm: number;
  widthMm: number;
  heightMm: number;
};

export type LabelSheetLayout = typeof labelSheet & {
  perPage: number;
  marginLeftMm: number;
  marginTopMm: number;
  pageCount: number;
  cells: LabelCell[];
};

/** Millimetres to 0.01 mm, so sums such as 8 × 33.9 print as 271.2, not 271.19999999999999. */
const mm = (x: number) => Math.round(x * 100) / 100;

/** Where each of `count` labels goes on A4 pages, in millimetres from the page's top-left corner. */
export function labelSheetLayout(count: number): LabelSheetLayout {
  if (!Number.isInteger(count) || count < 0) throw new RangeError(`label count must be a whole number ≥ 0, got ${count}`);
  const s = labelSheet;
  const perPage = s.columns * s.rows;
  const marginLeftMm = mm((s.pageWidthMm - s.columns * s.labelWidthMm - (s.columns - 1) * s.columnGapMm) / 2);
  const marginTopMm = mm((s.pageHeightMm - s.rows * s.labelHeightMm - (s.rows - 1) * s.rowGapMm) / 2);
  const cells: LabelCell[] = [];
  for (let index = 0; index < count; index++) {
    const onPage = index % perPage;
    const row = Math.floor(onPage / s.columns);
    const column = onPage % s.columns;
    cells.push({
      index,
      page: Math.floor(index / perPage),
      row,
      column,
      xMm: mm(marginLeftMm + column * (s.labelWidthMm + s.columnGapMm)),
      yMm: mm(marginTopMm + row * (s.labelHeightMm + s.rowGapMm)),
      widthMm: s.labelWidthMm,
      heightMm: s.labelHeightMm,
    });
  }
  return { ...s, perPage, marginLeftMm, marginTopMm, pageCount: Math.ceil(count / perPage), cells };
}
