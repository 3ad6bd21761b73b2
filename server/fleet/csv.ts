// CSV text (RFC 4180): fields with a comma, a double quote, CR or LF are quoted, quotes inside are
// doubled, and records end in CRLF. Pure.

/**
 * Text a spreadsheet would read as a formula (=, +, -, @, tab, CR first) gets a leading apostrophe, so
 * an exported site name cannot run in the reader's spreadsheet (OWASP "CSV injection", common practice).
 * Applied to free text only; numbers and times are written as they are.
 */
export function safeText(value: string | null | undefined): string {
  if (value === null || value === undefined) return '';
  return /^[=+\-@\t\r]/.test(value) ? `'${value}` : value;
}

export function csvField(value: string | number | boolean | null | undefined): string {
  if (value === null || value === undefined) return '';
  const text = String(value);
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

export function csvRecord(fields: readonly (string | number | boolean | null | undefined)[]): string {
  return `${fields.map(csvField).join(',')}\r\n`;
}
