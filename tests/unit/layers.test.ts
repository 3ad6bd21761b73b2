// The server's layers (DEVELOPERS.md, "rollout/ … the pure rollout core, no I/O … device-api/ is only
// the transport; fleet/ and releases/ import rollout/, never device-api/"), checked on the source
// text: every import specifier of the files, and for rollout/ every module it reaches.
import fs from 'node:fs';
import path from 'node:path';

const SERVER = path.resolve(__dirname, '../../server');

/** Import specifiers of a TypeScript source: static and type imports, re-exports, dynamic import() and require(). */
function importsOf(source: string): string[] {
  const found: string[] = [];
  const patterns = [/\b(?:import|export)\s+(?:type\s+)?[^'";]*?\bfrom\s*['"]([^'"]+)['"]/g, /\bimport\s*['"]([^'"]+)['"]/g, /\b(?:import|require)\s*\(\s*['"]([^'"]+)['"]\s*\)/g];
  for (const pattern of patterns) for (const m of source.matchAll(pattern)) found.push(m[1]);
  return found;
}

function filesUnder(dir: string): string[] {
  return fs.readdirSync(dir, { withFileTypes: true }).flatMap((e) => {
    const full = path.join(dir, e.name);
    return e.isDirectory() ? filesUnder(full) : e.name.endsWith('.ts') ? [full] : [];
  });
}

function resolveRelative(from: string, spec: string): string | null {
  const base = path.resolve(path.dirname(from), spec);
  for (const candidate of [`${base}.ts`, path.join(base, 'index.ts')]) if (fs.existsSync(candidate)) return candidate;
  return null;
}

const rel = (file: string) => path.relative(path.resolve(SERVER, '..'), file);

/** Packages and folders that do I/O (database, network, files, mail, HTTP) or hold state between calls. */
const IO = [/^sequelize$/, /^pg$/, /^express/, /^nodemailer/, /^node:(fs|net|http|https|child_process|worker_threads)$/, /^(fs|net|http|https|child_process)$/, /^pino/];
const IO_FOLDERS = ['db', 'device-api', 'fleet', 'releases', 'http', 'mail', 'auth', 'activity', 'images', 'loggers'].map((d) => path.join(SERVER, d) + path.sep);

describe('import scanner', () => {
  test('when a source imports in each form TypeScript allows, then every specifier is found', () => {
    // The forms of the TypeScript handbook's "Modules" chapter (from memory): named, type-only, namespace,
    // side-effect, re-export, dynamic import and CommonJS require.
    const source = [
      "import { a } from '../device-api/decision';",
      "import type { B } from 'sequelize';",
      "import * as c from './c';",
      "import './side-effect';",
      "export { d } from '../device-api/d';",
      "const e = await import('../device-api/e');",
      "const f = require('pg');",
      'import {\n  g,\n  type H,\n} from "../db/models";',
    ].join('\n');
    expect(importsOf(source).sort()).toEqual(['../db/models', '../device-api/d', '../device-api/decision', '../device-api/e', './c', './side-effect', 'pg', 'sequelize'].sort());
  });
});

describe('layers', () => {
  test('when fleet/ and releases/ are read, then none of their files imports device-api/', () => {
    const offenders = ['fleet', 'releases'].flatMap((folder) =>
      filesUnder(path.join(SERVER, folder)).flatMap((file) =>
        importsOf(fs.readFileSync(file, 'utf8'))
          .filter((spec) => spec.startsWith('.') && path.resolve(path.dirname(file), spec).startsWith(path.join(SERVER, 'device-api')))
          .map((spec) => `${rel(file)} imports ${spec}`),
      ),
    );
    expect(offenders).toEqual([]);
  });

  test('when everything rollout/ reaches is followed, then no module on the way does I/O', () => {
    const rollout = filesUnder(path.join(SERVER, 'rollout'));
    expect(rollout.length).toBeGreaterThan(0);
    const seen = new Set<string>();
    const offenders: string[] = [];
    const queue = [...rollout];
    while (queue.length) {
      const file = queue.shift()!;
      if (seen.has(file)) continue;
      seen.add(file);
      if (IO_FOLDERS.some((dir) => file.startsWith(dir))) offenders.push(`${rel(file)} is reached from rollout/`);
      for (const spec of importsOf(fs.readFileSync(file, 'utf8'))) {
        if (spec.startsWith('.')) {
          const target = resolveRelative(file, spec);
          if (target) queue.push(target);
          else offenders.push(`${rel(file)} imports ${spec}, which is not a TypeScript module`);
        } else if (IO.some((p) => p.test(spec))) {
          offenders.push(`${rel(file)} imports ${spec}`);
        }
      }
    }
    expect(offenders).toEqual([]);
  });
});
