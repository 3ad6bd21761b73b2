#!/usr/bin/env node
// The `heliodor` command (package.json "bin"): runs the TypeScript CLI in scripts/cli through tsx,
// with the same arguments, and exits with its status.
'use strict';

const { spawnSync } = require('node:child_process');
const path = require('node:path');

const root = path.resolve(__dirname, '..');
const tsxCli = require.resolve('tsx/cli', { paths: [root] });
const entry = path.join(root, 'scripts', 'cli', 'index.ts');

const result = spawnSync(
  process.execPath,
  [tsxCli, '--tsconfig', path.join(root, 'tsconfig.json'), entry, ...process.argv.slice(2)],
  { stdio: 'inherit' },
);
if (result.error) {
  process.stderr.write(`heliodor: cannot start the CLI: ${result.error.message}\n`);
  process.exit(1);
}
if (result.signal) process.kill(process.pid, result.signal);
process.exit(result.status ?? 1);
