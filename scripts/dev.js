#!/usr/bin/env node
// `npm run dev`: PostgreSQL + the API with reload (tsx watch) on PORT (default 8080), and the Expo
// dev server with fast refresh on http://127.0.0.1:8081, which forwards /api to the API
// (metro.config.js), so open 8081 while developing.
'use strict';
const { spawn } = require('node:child_process');
const path = require('node:path');
const b = require('./lib/bootstrap');

const dataDir = path.resolve(b.root, process.env.HELIODOR_DATA || '.data');
const pgPort = Number(process.env.HELIODOR_PG_PORT || 54329);
b.ensureNodeModules();
const cluster = b.pgCluster(dataDir, pgPort);
cluster.start();
if (!cluster.databaseExists('heliodor')) cluster.psql('CREATE DATABASE heliodor');

const env = { ...process.env, HELIODOR_DATA: dataDir, HELIODOR_PG_PORT: String(pgPort), HELIODOR_API_PORT: process.env.PORT || '8080', EXPO_OFFLINE: '1' };
const bin = (name) => path.join(b.root, 'node_modules', '.bin', name);
const children = [
  spawn(bin('tsx'), ['watch', '--clear-screen=false', 'server/index.ts'], { cwd: b.root, env, stdio: 'inherit' }),
  spawn(bin('expo'), ['start', '--web', '--port', '8081'], { cwd: b.root, env, stdio: 'inherit' }),
];
let stopping = false;
const stop = () => {
  if (stopping) return;
  stopping = true;
  children.forEach((c) => c.exitCode === null && c.kill('SIGINT'));
  setTimeout(() => {
    cluster.stop();
    process.exit(0);
  }, 1500);
};
process.on('SIGINT', stop);
process.on('SIGTERM', stop);
children.forEach((c) => c.on('exit', stop));
