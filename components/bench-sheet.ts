// The bench sheet: one CSV row per logger (serial, token, model, board) for the flashing jig.
// Pure; RFC 4180: CRLF line ends, fields holding a comma, quote or line break are quoted, quotes doubled.

export type BenchRow = { serial: string; token: string; modelName: string; board: string };

export function csvField(value: string): string {
  return /[",\r\n]/.test(value) ? `"${value.replace(/"/g, '""')}"` : value;
}

export function benchSheetCsv(rows: readonly BenchRow[]): string {
  const lines = [['serial', 'token', 'model', 'board'], ...rows.map((r) => [r.serial, r.token, r.modelName, r.board])];
  return lines.map((cells) => cells.map(csvField).join(',')).join('\r\n') + '\r\n';
}

/** A file name that says what and when: heliodor-bench-sheet-2026-12-01T2315.csv */
export function benchSheetName(now: Date = new Date()): string {
  return `heliodor-bench-sheet-${now.toISOString().slice(0, 16).replace(':', '')}.csv`;
}
