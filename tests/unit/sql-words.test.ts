// Words once: SQL receives the domain lists of schemas/words.ts as bound replacements
// (`state IN (:liveStates)`), never as quoted literals typed into SQL text, so a new release state,
// channel or reason cannot be missed by a query that spelled the old list out. Migrations are the
// exception: they are history, and their CHECK constraints must name the values of their day.
import fs from 'node:fs';
import path from 'node:path';
import ts from 'typescript';
import {
  CHANNELS,
  FAILURE_REASONS,
  INSTALL_STATES,
  LOGGER_STATUSES,
  RELEASE_STATES,
  RESET_REASONS,
  STOPPED_BY,
  UPDATE_STATES,
} from '../../schemas/words';

const root = path.resolve(__dirname, '..', '..');
const WORDS = new Set<string>([...RELEASE_STATES, ...INSTALL_STATES, ...FAILURE_REASONS, ...CHANNELS, ...LOGGER_STATUSES, ...UPDATE_STATES, ...RESET_REASONS, ...STOPPED_BY]);
/** SQL text: an upper-case keyword, or a comparison of a qualified column (`l.status = '…'`). */
const SQL = /\b(SELECT|UPDATE|INSERT|DELETE|WHERE|WHEN|THEN|AND|JOIN|FILTER)\b|\b\w+\.\w+\s*(=|<>|!=)\s*'/;
const QUOTED = /'([a-z_]+)'/g;

function sourceFiles(dir: string): string[] {
  return fs.readdirSync(dir, { withFileTypes: true }).flatMap((e) => {
    const p = path.join(dir, e.name);
    if (e.isDirectory()) return e.name === 'migrations' ? [] : sourceFiles(p);
    return /\.ts$/.test(e.name) ? [p] : [];
  });
}

/** The literal texts of a file's strings and templates (template parts joined with a placeholder). */
function literals(file: string): { text: string; line: number }[] {
  const source = ts.createSourceFile(file, fs.readFileSync(file, 'utf8'), ts.ScriptTarget.Latest, true);
  const found: { text: string; line: number }[] = [];
  const visit = (node: ts.Node) => {
    if (ts.isStringLiteral(node) || ts.isNoSubstitutionTemplateLiteral(node)) {
      found.push({ text: node.text, line: source.getLineAndCharacterOfPosition(node.getStart()).line + 1 });
    } else if (ts.isTemplateExpression(node)) {
      const text = [node.head.text, ...node.templateSpans.map((s) => s.literal.text)].join(' ${…} ');
      found.push({ text, line: source.getLineAndCharacterOfPosition(node.getStart()).line + 1 });
    }
    ts.forEachChild(node, visit);
  };
  visit(source);
  return found;
}

/** Quoted domain words inside SQL text, as "file:line 'word'". */
function quotedWordsInSql(files: string[]): string[] {
  return files.flatMap((file) =>
    literals(file)
      .filter((l) => SQL.test(l.text))
      .flatMap((l) => [...l.text.matchAll(QUOTED)].filter((m) => WORDS.has(m[1])).map((m) => `${path.relative(root, file)}:${l.line} '${m[1]}'`)),
  );
}

describe('domain words in SQL', () => {
  test('when server/ is scanned, then no SQL text spells a domain word as a quoted literal', () => {
    expect(quotedWordsInSql(sourceFiles(path.join(root, 'server')))).toEqual([]);
  });

  test('when a statement spells a state out, then the scan finds it (the scan itself can fail)', () => {
    const dir = fs.mkdtempSync(path.join(require('node:os').tmpdir(), 'heliodor-sql-words-'));
    const file = path.join(dir, 'bad.ts');
    fs.writeFileSync(file, "export const q = `SELECT id FROM releases WHERE state IN ('pilot', 'widening')`;\n");
    expect(quotedWordsInSql([file])).toEqual([`${path.relative(root, file)}:1 'pilot'`, `${path.relative(root, file)}:1 'widening'`]);
  });
});
