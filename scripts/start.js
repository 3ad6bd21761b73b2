#!/usr/bin/env node
// `npm start`: install what is missing, start PostgreSQL and the mail fake, migrate, seed the demo,
// build the web app when stale, and serve app + API from Express (HELIODOR_WORKERS processes on one
// port, default 1: server/index.ts runs them with node:cluster). Ctrl-C stops it all.
'use strict';
const { spawn } = require('node:child_process');
const path = require('node:path');
const b = require('./lib/bootstrap');

const started = Date.now();
const dataDir = path.resolve(b.root, process.env.HELIODOR_DATA || '.data');
const pgPort = Number(process.env.HELIODOR_PG_PORT || 54329);
const database = process.env.HELIODOR_DB_NAME || 'heliodor';

b.ensureNodeModules();
const cluster = b.pgCluster(dataDir, pgPort);
cluster.start();
if (!cluster.databaseExists(database)) cluster.psql(`CREATE DATABASE ${database}`);
b.ensureWebBuild();

// One process for the server: Node with tsx as its TypeScript loader (no supervising tsx process in
// between, which would kill a server that takes more than a moment to stop).
const child = spawn(process.execPath, ['--import', 'tsx', 'server/index.ts'], {
  cwd: b.root,
  stdio: 'inherit',
  env: { ...process.env, HELIODOR_DATA: dataDir, HELIODOR_PG_PORT: String(pgPort), HELIODOR_STARTED_AT: String(started) },
});

let stopping = false;
function stop(signal) {
  if (stopping) return;
  stopping = true;
  // Ctrl-C reaches the server too (same process group); passing the signal on covers a `kill` of this
  // process alone. The server stops once, however many times it is told.
  if (child.exitCode === null) child.kill(signal);
}
process.on('SIGINT', () => stop('SIGINT'));
process.on('SIGTERM', () => stop('SIGTERM'));
child.on('exit', (code) => {
  try {
    cluster.stop();
  } finally {
    process.exit(stopping ? 0 : code ?? 1);
  }
});
