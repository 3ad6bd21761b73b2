// Batch registration: reads and checks a whole CSV upload before anything is stored.
// Pure: bytes in, rows or every problem (with the file's line number, header = line 1) out.
import { parse, type InfoRecord } from 'csv-parse/sync';
import { serialPattern, serialRule } from '../../schemas/loggers';
import { CHANNELS, type Channel } from '../../schemas/words';

export const MAX_BATCH_ROWS = 5000;
/** Longest row we read; a logger row is well under 200 bytes, so anything near this is not a logger list. */
const MAX_ROW_BYTES = 4096;

export const batchColumns = ['serial', 'model', 'board', 'channel'] as const;
export type BatchColumn = (typeof batchColumns)[number];
const requiredColumns: readonly BatchColumn[] = ['serial', 'model', 'board'];

export type BatchModel = { id: string; name: string; boards: readonly string[] };
export type BatchRow = { line: number; serial: string; modelId: string; board: string; channel: Channel };
/** `path` is the column name, or "(file)", "(header)", "(row)" for problems that belong to no one column. */
export type BatchError = { line: number; path: string; message: string };
export type BatchRefusal = { ok: false; errors: BatchError[] };
export type BatchResult = { ok: true; rows: BatchRow[] } | BatchRefusal;

/**
 * Serials are kept as written but compared without regard to case, so "fl2-0001" and "FL2-0001" cannot
 * both exist: on a label or over the phone they read as the same logger.
 */
export function serialKey(serial: string): string {
  return serial.trim().toLowerCase();
}

const fileError = (line: number, message: string): BatchRefusal => ({ ok: false, errors: [{ line, path: '(file)', message }] });
const saveAsUtf8 = 'save it as "CSV UTF-8" and upload it again';

/**
 * Reads a batch upload: header `serial,model,board[,channel]` (any order, any case), the model by name or id,
 * channel stable or early (blank means stable). Blank lines, and rows whose cells are all blank, are skipped.
 * `existingSerials` are the serials already registered (any case; compared by serialKey).
 */
export function parseLoggerBatch(buffer: Uint8Array, models: readonly BatchModel[], existingSerials: ReadonlySet<string>): BatchResult {
  const decoded = decodeUtf8(buffer);
  if (!decoded.ok) return decoded;
  // One line ending, so csv-parse's line count is the line number an editor shows (it counts CRLF inside quotes twice).
  const text = decoded.text.replace(/\r\n?/g, '\n');
  if (text.trim() === '') return fileError(1, 'the file is empty; it needs a header row (serial,model,board[,channel]) and one row per logger');

  const records = readRecords(text);
  if (!records.ok) return records;
  const [header, ...dataRows] = records.rows;
  if (!header) return fileError(1, 'the file is empty; it needs a header row (serial,model,board[,channel]) and one row per logger');

  const columns = readHeader(header);
  if (!columns.ok) return columns;
  if (dataRows.length === 0) return fileError(header.line, 'the file has a header row but no loggers');
  if (dataRows.length > MAX_BATCH_ROWS) {
    return fileError(
      dataRows[MAX_BATCH_ROWS].line,
      `the file has ${dataRows.length} loggers; one upload takes at most ${MAX_BATCH_ROWS} — split it into several files`,
    );
  }

  const modelById = new Map(models.map((m) => [m.id.toLowerCase(), m]));
  const modelsByName = new Map<string, BatchModel[]>();
  for (const m of models) {
    const key = m.name.trim().toLowerCase();
    modelsByName.set(key, [...(modelsByName.get(key) ?? []), m]);
  }
  const existing = new Set([...existingSerials].map(serialKey));
  const firstLineOfSerial = new Map<string, number>();

  const errors: BatchError[] = [];
  const rows: BatchRow[] = [];
  for (const record of dataRows) {
    const { line } = record;
    const cell = (column: BatchColumn) => {
      const index = columns.index[column];
      return index === undefined ? '' : (record.fields[index] ?? '').trim();
    };
    const rowErrors: BatchError[] = [];
    const fail = (path: string, message: string) => rowErrors.push({ line, path, message });

    const extra = record.fields.slice(columns.count).filter((f) => f.trim() !== '');
    if (extra.length > 0) {
      fail('(row)', `this row has ${columns.count + extra.length} values but the header names ${columns.count} columns`);
    }

    const serial = cell('serial');
    if (serial === '') fail('serial', 'serial is missing');
    else if (!serialPattern.test(serial)) fail('serial', `serial "${serial}" ${serialRule}`);
    else if (existing.has(serialKey(serial))) fail('serial', `a logger with serial ${serial} is already registered`);
    else {
      const firstLine = firstLineOfSerial.get(serialKey(serial));
      if (firstLine !== undefined) fail('serial', `serial ${serial} is also on line ${firstLine}`);
      else firstLineOfSerial.set(serialKey(serial), line);
    }

    const modelText = cell('model');
    let model: BatchModel | undefined;
    if (modelText === '') fail('model', 'model is missing');
    else {
      model = modelById.get(modelText.toLowerCase());
      if (!model) {
        const named = modelsByName.get(modelText.toLowerCase()) ?? [];
        if (named.length === 1) model = named[0];
        else if (named.length > 1) fail('model', `model name "${modelText}" matches ${named.length} models; give the model's id instead`);
        else fail('model', `unknown model "${modelText}"; ${knownModels(models)}`);
      }
    }

    const boardText = cell('board');
    let board: string | undefined;
    if (boardText === '') fail('board', 'board revision is missing');
    else if (model) {
      board = model.boards.find((b) => b.trim().toLowerCase() === boardText.toLowerCase());
      if (board === undefined) {
        const listed = model.boards.length ? ` (${model.boards.join(', ')})` : ' (it lists none yet)';
        fail('board', `board "${boardText}" is not a board revision of ${model.name}${listed}`);
      }
    }

    const channelText = cell('channel').toLowerCase();
    const channel = (channelText === '' ? 'stable' : channelText) as Channel;
    if (!CHANNELS.includes(channel)) fail('channel', `channel "${cell('channel')}" must be stable or early (blank means stable)`);

    if (rowErrors.length > 0 || !model || board === undefined) errors.push(...rowErrors);
    else rows.push({ line, serial, modelId: model.id, board, channel });
  }
  return errors.length > 0 ? { ok: false, errors } : { ok: true, rows };
}

function knownModels(models: readonly BatchModel[]): string {
  if (models.length === 0) return 'no models are set up yet — an admin adds them first';
  const names = models.slice(0, 5).map((m) => m.name);
  return `known models: ${names.join(', ')}${models.length > 5 ? ` and ${models.length - 5} more` : ''}`;
}

// ─── Bytes to text ──────────────────────────────────────────────────────────

function decodeUtf8(buffer: Uint8Array): { ok: true; text: string } | BatchRefusal {
  const [b0, b1, b2, b3] = buffer;
  if ((b0 === 0xff && b1 === 0xfe) || (b0 === 0xfe && b1 === 0xff)) {
    return fileError(1, `the file is UTF-16 text; ${saveAsUtf8}`);
  }
  if (b0 === 0x50 && b1 === 0x4b && b2 === 0x03 && b3 === 0x04) {
    return fileError(1, `the file is a spreadsheet workbook, not CSV; ${saveAsUtf8}`);
  }
  // UTF-16 without a byte-order mark still has a zero byte in every ASCII character; CSV text never has one.
  const nul = buffer.indexOf(0);
  if (nul >= 0) {
    return fileError(lineOfByte(buffer, nul), `the file contains zero bytes, as UTF-16 text or a binary file does; ${saveAsUtf8}`);
  }
  try {
    // TextDecoder drops a leading UTF-8 byte-order mark, as spreadsheet programs write one.
    return { ok: true, text: new TextDecoder('utf-8', { fatal: true }).decode(buffer) };
  } catch {
    return fileError(firstBadUtf8Line(buffer), `this line is not UTF-8 text (the file may be saved as Latin-1 or Windows-1252); ${saveAsUtf8}`);
  }
}

function lineOfByte(buffer: Uint8Array, offset: number): number {
  let line = 1;
  for (let i = 0; i < offset; i++) if (buffer[i] === 0x0a) line++;
  return line;
}

/** A newline byte never occurs inside a UTF-8 sequence, so each line can be checked on its own. */
function firstBadUtf8Line(buffer: Uint8Array): number {
  const decoder = new TextDecoder('utf-8', { fatal: true });
  let start = 0;
  let line = 1;
  while (start <= buffer.length) {
    let end = buffer.indexOf(0x0a, start);
    if (end < 0) end = buffer.length;
    try {
      decoder.decode(buffer.subarray(start, end));
    } catch {
      return line;
    }
    start = end + 1;
    line++;
  }
  return 1;
}

// ─── Text to records ────────────────────────────────────────────────────────

type CsvRecord = { line: number; fields: string[] };

function readRecords(text: string): { ok: true; rows: CsvRecord[] } | BatchRefusal {
  let lastEndLine = 0;
  const endLines: number[] = [];
  try {
    const parsed = parse(text, {
      relax_column_count: true,
      skip_empty_lines: true,
      trim: true,
      max_record_size: MAX_ROW_BYTES,
      on_record: (fields: string[], context: InfoRecord) => {
        lastEndLine = context.lines;
        endLines.push(context.lines);
        return fields;
      },
    });
    const rows = parsed
      .map((fields, i) => ({
        // csv-parse reports where a record ends; a quoted field may span lines, so count back to where it starts.
        line: endLines[i] - fields.reduce((n, f) => n + (f.match(/\n/g)?.length ?? 0), 0),
        fields,
      }))
      .filter((r) => r.fields.some((f) => f.trim() !== ''));
    return { ok: true, rows };
  } catch (error) {
    const code = (error as { code?: string }).code ?? '';
    const line = firstContentLineAfter(text, lastEndLine);
    const message =
      code === 'CSV_QUOTE_NOT_CLOSED'
        ? 'a quoted value that starts on this line is never closed; check the quotes (") in this row'
        : code === 'CSV_MAX_RECORD_SIZE'
          ? `this row is longer than ${MAX_ROW_BYTES} characters; check the quotes (") in this row`
          : /QUOTE/.test(code)
            ? 'a quote (") is out of place in this row: quote a whole value, and double any quote inside it ("")'
            : 'this row cannot be read as CSV';
    return { ok: false, errors: [{ line, path: '(file)', message }] };
  }
}

function firstContentLineAfter(text: string, afterLine: number): number {
  const lines = text.split('\n');
  for (let i = afterLine; i < lines.length; i++) if (lines[i].trim() !== '') return i + 1;
  return afterLine + 1;
}

// ─── Header ─────────────────────────────────────────────────────────────────

type Columns = { ok: true; index: Partial<Record<BatchColumn, number>>; count: number };

function readHeader(header: CsvRecord): Columns | BatchRefusal {
  const { line, fields } = header;
  const errors: BatchError[] = [];
  if (fields.length === 1 && /[;\t]/.test(fields[0])) {
    return fileError(line, 'the header is separated by semicolons or tabs; separate the columns with commas (serial,model,board[,channel])');
  }
  const names = fields.map((f) => f.trim().toLowerCase());
  if (!names.some((name) => (batchColumns as readonly string[]).includes(name))) {
    return fileError(line, 'the first row must be the header serial,model,board[,channel]; this one names none of those columns');
  }
  const index: Partial<Record<BatchColumn, number>> = {};
  fields.forEach((raw, i) => {
    const name = raw.trim().toLowerCase();
    if (name === '') {
      errors.push({ line, path: '(header)', message: `column ${i + 1} has no name; the header names serial, model, board and optionally channel` });
    } else if (!(batchColumns as readonly string[]).includes(name)) {
      errors.push({ line, path: raw.trim(), message: `unknown column "${raw.trim()}"; the header names serial, model, board and optionally channel` });
    } else if (index[name as BatchColumn] !== undefined) {
      errors.push({ line, path: name, message: `column "${name}" appears twice` });
    } else {
      index[name as BatchColumn] = i;
    }
  });
  for (const column of requiredColumns) {
    if (index[column] === undefined) {
      errors.push({ line, path: column, message: `the header has no "${column}" column; it names serial, model, board and optionally channel` });
    }
  }
  return errors.length > 0 ? { ok: false, errors } : { ok: true, index, count: fields.length };
}
