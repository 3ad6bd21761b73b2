import { MAX_BATCH_ROWS, parseLoggerBatch, type BatchModel, type BatchResult } from '../../server/loggers/batch';

// Demo scenario (PRODUCT.md): the FL-2 field logger with board revisions A, B and C.
const fl2: BatchModel = { id: '5b0e6f0a-2c1d-4e8f-9a3b-7c6d5e4f3a21', name: 'FL-2 field logger', boards: ['A', 'B', 'C'] };
const fl1: BatchModel = { id: '0f3c9d2e-8b7a-4c6d-9e5f-1a2b3c4d5e6f', name: 'FL-1 bench logger', boards: ['A'] };
const models = [fl2, fl1];

const csv = (text: string) => Buffer.from(text, 'utf8');
const run = (text: string | Buffer, existing: string[] = []) =>
  parseLoggerBatch(typeof text === 'string' ? csv(text) : text, models, new Set(existing));

function errorsOf(result: BatchResult) {
  if (result.ok) throw new Error(`expected errors, got ${result.rows.length} rows`);
  return result.errors;
}
function rowsOf(result: BatchResult) {
  if (!result.ok) throw new Error(`expected rows, got ${JSON.stringify(result.errors)}`);
  return result.rows;
}

function numberedRows(count: number) {
  return Array.from({ length: count }, (_, i) => `FL2-AV-${String(i + 1).padStart(5, '0')},FL-2 field logger,B`);
}

describe('batch registration CSV', () => {
  test('when a good file lists loggers by model name and id, then every row comes back with its line, the model id and the board', () => {
    const rows = rowsOf(
      run(
        [
          'serial,model,board,channel',
          'FL2-AV-0001,FL-2 field logger,A,stable',
          `FL2-AV-0002,${fl2.id},B,early`,
          'FL2-AV-0003,fl-2 FIELD logger,c,',
        ].join('\n'),
      ),
    );
    expect(rows).toEqual([
      { line: 2, serial: 'FL2-AV-0001', modelId: fl2.id, board: 'A', channel: 'stable' },
      { line: 3, serial: 'FL2-AV-0002', modelId: fl2.id, board: 'B', channel: 'early' },
      { line: 4, serial: 'FL2-AV-0003', modelId: fl2.id, board: 'C', channel: 'stable' },
    ]);
  });

  test('when the header is in another order and case, without channel, then columns are matched by name and channel defaults to stable', () => {
    const rows = rowsOf(run('Board, MODEL ,Serial\nB,FL-2 field logger,FL2-AV-0101\n'));
    expect(rows).toEqual([{ line: 2, serial: 'FL2-AV-0101', modelId: fl2.id, board: 'B', channel: 'stable' }]);
  });

  test('when the file has CRLF line endings (RFC 4180) and blank lines, then rows keep the line numbers an editor shows', () => {
    const rows = rowsOf(run('serial,model,board\r\n\r\nFL2-AV-0201,FL-2 field logger,A\r\n,,\r\nFL2-AV-0202,FL-2 field logger,B\r\n'));
    expect(rows.map((r) => [r.line, r.serial])).toEqual([
      [3, 'FL2-AV-0201'],
      [5, 'FL2-AV-0202'],
    ]);
  });

  test('when fields are quoted and hold commas (RFC 4180 §2), then they are read whole, and a quoted line break does not shift later line numbers', () => {
    const models2 = [...models, { id: '9d8c7b6a-5f4e-4d3c-8b2a-1f0e9d8c7b6a', name: 'FL-3 logger, outdoor', boards: ['A'] }];
    const result = parseLoggerBatch(
      csv('serial,model,board\n"FL3-0001","FL-3 logger, outdoor",A\nFL2-0002,"FL-2 field logger",B\n'),
      models2,
      new Set(),
    );
    expect(rowsOf(result).map((r) => [r.line, r.modelId])).toEqual([
      [2, '9d8c7b6a-5f4e-4d3c-8b2a-1f0e9d8c7b6a'],
      [3, fl2.id],
    ]);
    const errors = errorsOf(run('serial,model,board\r\n"FL2\r\n0001",FL-2 field logger,A\r\nFL2 0002,FL-2 field logger,B\r\n'));
    expect(errors.map((e) => [e.line, e.path])).toEqual([
      [2, 'serial'],
      [4, 'serial'],
    ]);
  });

  test('when the file starts with a UTF-8 byte-order mark (as spreadsheet programs write), then it is read normally', () => {
    const withBom = Buffer.concat([Buffer.from([0xef, 0xbb, 0xbf]), csv('serial,model,board\nFL2-AV-0301,FL-2 field logger,A\n')]);
    expect(rowsOf(run(withBom))[0].serial).toBe('FL2-AV-0301');
  });

  test('when rows are bad in different ways, then each is reported with its line number and column, and no row is returned', () => {
    const errors = errorsOf(
      run(
        [
          'serial,model,board,channel', // 1
          'FL2-AV-0401,FL-2 field logger,A,stable', // 2 good
          'FL2-AV-0402,FL-9 logger,A,stable', // 3 unknown model
          'FL2-AV-0403,FL-2 field logger,D,stable', // 4 board not of that model
          'FL2-AV-0401,FL-2 field logger,B,stable', // 5 duplicate of line 2
          'FL2-AV-0099,FL-2 field logger,B,', // 6 already registered
          'FL2 AV 0406,FL-2 field logger,B,', // 7 bad serial characters
          'F2,FL-2 field logger,B,', // 8 too short
          'FL2-AV-0408,FL-2 field logger,B,beta', // 9 unknown channel
          ',FL-2 field logger,', // 10 serial and board missing
          'FL2-AV-0410,FL-2 field logger,B,stable,extra', // 11 one value too many
          'FL2-AV-0411,FL-1 bench logger,B', // 12 board B is not an FL-1 board
        ].join('\n'),
        ['fl2-av-0099'],
      ),
    );
    expect(errors.map((e) => [e.line, e.path])).toEqual([
      [3, 'model'],
      [4, 'board'],
      [5, 'serial'],
      [6, 'serial'],
      [7, 'serial'],
      [8, 'serial'],
      [9, 'channel'],
      [10, 'serial'],
      [10, 'board'],
      [11, '(row)'],
      [12, 'board'],
    ]);
    const at = (line: number) => errors.find((e) => e.line === line)!.message;
    expect(at(3)).toContain('unknown model "FL-9 logger"');
    expect(at(3)).toContain('FL-2 field logger');
    expect(at(4)).toBe('board "D" is not a board revision of FL-2 field logger (A, B, C)');
    expect(at(5)).toBe('serial FL2-AV-0401 is also on line 2');
    expect(at(6)).toBe('a logger with serial FL2-AV-0099 is already registered');
    expect(at(7)).toContain('3 to 40 characters');
    expect(at(9)).toContain('stable or early');
    expect(at(11)).toContain('the header names 4 columns');
  });

  test('when a serial is 40 characters, then it is accepted; at 41 it is refused (our serial rule)', () => {
    expect(rowsOf(run(`serial,model,board\n${'A'.repeat(40)},FL-2 field logger,A\n`))).toHaveLength(1);
    expect(errorsOf(run(`serial,model,board\n${'A'.repeat(41)},FL-2 field logger,A\n`))[0]).toMatchObject({ line: 2, path: 'serial' });
  });

  test('when a 5 000-row file has one bad line, then exactly that line is named and nothing else', () => {
    const rows = numberedRows(MAX_BATCH_ROWS);
    rows[3141] = 'FL2-AV-03142,FL-2 field logger,E';
    const errors = errorsOf(run(['serial,model,board', ...rows].join('\n')));
    expect(errors).toEqual([{ line: 3143, path: 'board', message: expect.stringContaining('"E"') }]);
    expect(rowsOf(run(['serial,model,board', ...numberedRows(MAX_BATCH_ROWS)].join('\n')))).toHaveLength(5000);
  });

  test('when the file has 5 001 rows, then it is refused with one error at the first row over the limit', () => {
    const errors = errorsOf(run(['serial,model,board', ...numberedRows(MAX_BATCH_ROWS + 1)].join('\n')));
    expect(errors).toEqual([{ line: 5002, path: '(file)', message: expect.stringContaining('at most 5000') }]);
  });

  test('when the file is empty or has only a header, then it is refused', () => {
    expect(errorsOf(run(''))).toEqual([{ line: 1, path: '(file)', message: expect.stringContaining('empty') }]);
    expect(errorsOf(run('\n \r\n'))[0].message).toContain('empty');
    expect(errorsOf(run(Buffer.from([0xef, 0xbb, 0xbf])))[0].message).toContain('empty');
    expect(errorsOf(run('serial,model,board\n'))[0].message).toContain('no loggers');
  });

  test('when the header has an extra, missing, repeated or semicolon-separated column, then it is refused on line 1 naming the column', () => {
    expect(errorsOf(run('serial,model,board,site\nFL2-1,FL-2 field logger,A,Mill\n'))).toEqual([
      { line: 1, path: 'site', message: expect.stringContaining('unknown column "site"') },
    ]);
    expect(errorsOf(run('serial,model\nFL2-AV-1,FL-2 field logger\n'))).toEqual([
      { line: 1, path: 'board', message: expect.stringContaining('no "board" column') },
    ]);
    expect(errorsOf(run('serial,model,board,Serial\nx,y,z,w\n'))[0]).toMatchObject({ line: 1, path: 'serial' });
    expect(errorsOf(run('serial;model;board\nFL2-AV-1;FL-2 field logger;A\n'))[0].message).toContain('commas');
    expect(errorsOf(run('FL2-AV-0001,FL-2 field logger,A\n'))[0].message).toContain('header');
  });

  test('when the file is Latin-1 (not UTF-8), then it is refused naming the first line that is not UTF-8', () => {
    // "Müller" in ISO-8859-1: ü is the single byte FCh, which is never valid on its own in UTF-8 (RFC 3629 §3).
    const latin1 = Buffer.from('serial,model,board\nFL2-AV-0501,FL-2 field logger,A\nFL2-AV-0502,FL-2 M\u00fcller,A\n', 'latin1');
    expect(errorsOf(run(latin1))).toEqual([{ line: 3, path: '(file)', message: expect.stringContaining('not UTF-8') }]);
  });

  test('when the file is UTF-16 (with or without a byte-order mark), then it is refused asking for UTF-8', () => {
    const text = 'serial,model,board\nFL2-AV-0601,FL-2 field logger,A\n';
    const withBom = Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(text, 'utf16le')]);
    expect(errorsOf(run(withBom))).toEqual([{ line: 1, path: '(file)', message: expect.stringContaining('UTF-16') }]);
    expect(errorsOf(run(Buffer.from(text, 'utf16le')))[0].message).toContain('UTF-16');
  });

  test('when a quote is never closed, then the line where the quoted value starts is named', () => {
    const errors = errorsOf(run('serial,model,board\nFL2-AV-0701,FL-2 field logger,A\n\nFL2-AV-0702,"FL-2 field logger,B\nFL2-AV-0703,FL-2 field logger,C\n'));
    expect(errors).toEqual([{ line: 4, path: '(file)', message: expect.stringContaining('never closed') }]);
  });
});
