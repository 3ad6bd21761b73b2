#!/usr/bin/env node
// `npm run db:start` / `npm run db:stop`: only the private PostgreSQL cluster.
'use strict';
const path = require('node:path');
const b = require('./lib/bootstrap');

const dataDir = path.resolve(b.root, process.env.HELIODOR_DATA || '.data');
const cluster = b.pgCluster(dataDir, Number(process.env.HELIODOR_PG_PORT || 54329));
const database = process.env.HELIODOR_DB_NAME || 'heliodor';
const command = process.argv[2];
if (command === 'start') {
  cluster.start();
  if (!cluster.databaseExists(database)) cluster.psql(`CREATE DATABASE ${database}`);
} else if (command === 'stop') {
  cluster.stop();
} else {
  console.error('usage: node scripts/db.js start|stop');
  process.exit(2);
}
