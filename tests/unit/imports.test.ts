// Where the console's code may import from. The web bundle starts at app/ (Expo Router loads every route
// file) and takes in everything those files import; server code must never be among it, and the web
// build's staleness check (scripts/lib/bootstrap.js `webSources`) must watch every folder it reaches, or a
// change there leaves the old code in the browser. Imports are read with the TypeScript compiler's own
// pre-processor (ts.preProcessFile), which skips comments and strings, not with a pattern of our own.
import fs from 'node:fs';
import path from 'node:path';
import ts from 'typescript';

const root = path.resolve(__dirname, '..', '..');
const { webSources } = require('../../scripts/lib/bootstrap.js') as { webSources: string[] };

const CLIENT_FOLDERS = ['app', 'components', 'hooks'];
const SOURCE = /\.(tsx?|jsx?)$/;
// Metro's web resolution: platform files first, then the plain extensions, then a folder's index.
const EXTENSIONS = ['.web.tsx', '.web.ts', '.web.js', '.tsx', '.ts', '.js', '.jsx', '.json'];

const rel = (file: string) => path.relative(root, file).split(path.sep).join('/');

function filesUnder(folder: string): string[] {
  const out: string[] = [];
  const visit = (dir: string) => {
    for (const entry of fs.readdirSync(dir, { withFileTypes: true })) {
      if (entry.name === 'node_modules' || entry.name.startsWith('.')) continue;
      const full = path.join(dir, entry.name);
      if (entry.isDirectory()) visit(full);
      else if (SOURCE.test(entry.name)) out.push(full);
    }
  };
  visit(path.join(root, folder));
  return out;
}

/** Every module a file names (import, export … from, require, import()). */
function specifiersOf(file: string): string[] {
  const info = ts.preProcessFile(fs.readFileSync(file, 'utf8'), true, true);
  return info.importedFiles.map((f) => f.fileName);
}

/** The file a project-relative specifier lands on, or null for a package from node_modules. */
function resolve(from: string, specifier: string): string | null {
  let base: string;
  if (specifier.startsWith('.')) base = path.resolve(path.dirname(from), specifier);
  else if (specifier.startsWith('@/')) base = path.join(root, specifier.slice(2)); // tsconfig "paths"
  else return null;
  const candidates = [base, ...EXTENSIONS.map((e) => base + e), ...EXTENSIONS.map((e) => path.join(base, `index${e}`))];
  const found = candidates.find((c) => fs.existsSync(c) && fs.statSync(c).isFile());
  if (!found) throw new Error(`${rel(from)} imports "${specifier}", which names no file`);
  return found;
}

/** Every project file the bundle takes in, starting from app/, with one importer each for messages. */
function bundleClosure(): Map<string, string> {
  const reached = new Map<string, string>();
  const queue = filesUnder('app');
  queue.forEach((f) => reached.set(f, 'app/ (a route)'));
  while (queue.length) {
    const file = queue.shift()!;
    if (!SOURCE.test(file)) continue;
    for (const specifier of specifiersOf(file)) {
      const target = resolve(file, specifier);
      if (!target || reached.has(target)) continue;
      reached.set(target, rel(file));
      queue.push(target);
    }
  }
  return reached;
}

describe('what the console imports', () => {
  test('when every file under app/, components/ and hooks/ is read, then none imports anything under server/', () => {
    const offenders = CLIENT_FOLDERS.flatMap(filesUnder).flatMap((file) =>
      specifiersOf(file)
        .map((s) => resolve(file, s))
        .filter((target): target is string => target !== null && rel(target).startsWith('server/'))
        .map((target) => `${rel(file)} → ${rel(target)}`),
    );
    expect(offenders).toEqual([]);
  });

  test('when the bundle is followed from app/, then it reaches some file in lib/ and schemas/, and nothing under server/', () => {
    const reached = [...bundleClosure().keys()].map(rel);
    expect(reached.some((f) => f.startsWith('lib/'))).toBe(true);
    expect(reached.some((f) => f.startsWith('schemas/'))).toBe(true);
    expect(reached.filter((f) => f.startsWith('server/'))).toEqual([]);
  });

  test("when the bundle is followed from app/, then every file it reaches lies in a place the web build's staleness check watches", () => {
    const watched = (file: string) => webSources.some((source) => file === source || file.startsWith(`${source}/`));
    const unwatched = [...bundleClosure()].filter(([file]) => !watched(rel(file))).map(([file, importer]) => `${rel(file)} (imported by ${importer})`);
    expect(unwatched).toEqual([]);
  });

  test('when a specifier goes up into server/, then the scan resolves it there (the scan can see an offence)', () => {
    const component = path.join(root, 'components', 'any.tsx');
    expect(rel(resolve(component, '../server/loggers/labels')!)).toBe('server/loggers/labels.ts');
    expect(rel(resolve(component, '@/server/fleet/table')!)).toBe('server/fleet/table.ts');
    expect(resolve(component, 'react-native')).toBeNull();
  });
});
