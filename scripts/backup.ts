// `npm run backup -- <file>`: one archive (scripts/ops/archive.ts) of the database and the firmware
// store, consistent with each other: the database is dumped from an exported snapshot
// (pg_export_snapshot, PostgreSQL manual §9.27.5), and exactly the images that snapshot names are
// copied, each checked against its SHA-256 name. The database may be in use meanwhile; when its
// cluster is not running (the server is stopped), it is started for the dump and stopped after.
//
// With images in object storage (HELIODOR_IMAGE_STORE=s3) the archive holds the database only, and says
// so in its manifest (imagesLeftIn) and on the terminal: the images stay in the bucket, whose own
// versioning or replication protects them; a backup does not download a bucket.
import { spawnSync } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';
import pg from 'pg';
import * as tar from 'tar';
import { ARCHIVE_FORMAT, ARCHIVE_ROOT, bootstrap, DEMO_FILES, filesBelow, megabytes, settings, sha256File, sumsOf, type ArchiveManifest } from './ops/archive';

async function main() {
  const target = process.argv[2];
  if (!target || process.argv.length > 3) {
    process.stderr.write('usage: npm run backup -- <file>   (for example backups/heliodor-2026-12-01.tar)\n');
    process.exit(2);
  }
  const file = path.resolve(process.cwd(), target);
  if (fs.existsSync(file)) throw new Error(`${file} already exists; name a new file (a backup never overwrites another).`);
  fs.mkdirSync(path.dirname(file), { recursive: true });
  const started = Date.now();
  const s = settings();

  let cluster: ReturnType<typeof bootstrap.pgCluster> | null = null;
  let startedCluster = false;
  let url = s.databaseUrl;
  if (!url) {
    cluster = bootstrap.pgCluster(s.dataDir, s.pgPort);
    if (!cluster.initialized()) throw new Error(`no database cluster in ${s.dataDir}: nothing to back up (set HELIODOR_DATA or DATABASE_URL).`);
    if (!cluster.running()) {
      cluster.start();
      startedCluster = true;
    }
    url = cluster.url(s.database);
  }

  const parent = fs.mkdtempSync(path.join(path.dirname(file), '.heliodor-backup-'));
  const staging = path.join(parent, ARCHIVE_ROOT);
  const client = new pg.Client({ connectionString: url, application_name: 'heliodor backup' });
  try {
    fs.mkdirSync(path.join(staging, 'firmware-store'), { recursive: true });
    await client.connect();
    await client.query('BEGIN ISOLATION LEVEL REPEATABLE READ READ ONLY');
    const snapshot = (await client.query<{ id: string }>('SELECT pg_export_snapshot() AS id')).rows[0].id;
    const tables = (await client.query<{ name: string }>(`SELECT tablename AS name FROM pg_tables WHERE schemaname = 'public' ORDER BY tablename`)).rows.map((r) => r.name);
    const counts: Record<string, number> = {};
    for (const table of tables) counts[table] = Number((await client.query<{ n: string }>(`SELECT count(*) AS n FROM "${table.replace(/"/g, '""')}"`)).rows[0].n);
    const images = tables.includes('images') ? (await client.query<{ sha256: string }>('SELECT sha256 FROM images ORDER BY sha256')).rows.map((r) => r.sha256.trim()) : [];

    // The dump sees exactly what this transaction sees.
    const pgDump = path.join(bootstrap.postgresBinDir(), 'pg_dump');
    const dump = spawnSync(pgDump, ['--format=custom', `--snapshot=${snapshot}`, `--file=${path.join(staging, 'database.dump')}`, `--dbname=${url}`], { stdio: ['ignore', 'inherit', 'pipe'], encoding: 'utf8' });
    if (dump.status !== 0) throw new Error(`pg_dump failed: ${dump.stderr || `exit ${dump.status}`}`);
    const pgDumpVersion = spawnSync(pgDump, ['--version'], { encoding: 'utf8' }).stdout.trim();
    await client.query('COMMIT');

    for (const sha256 of s.objectStore ? [] : images) {
      const source = path.join(s.storeDir, sha256);
      if (!fs.existsSync(source)) throw new Error(`the database names image ${sha256} but the firmware store (${s.storeDir}) has no such file`);
      const copy = path.join(staging, 'firmware-store', sha256);
      fs.copyFileSync(source, copy);
      if (sha256File(copy) !== sha256) throw new Error(`image ${sha256} in the firmware store does not match its SHA-256: the store is damaged`);
    }
    const demoFiles = DEMO_FILES.filter((f) => fs.existsSync(path.join(s.dataDir, f)));
    for (const f of demoFiles) {
      fs.mkdirSync(path.dirname(path.join(staging, 'data', f)), { recursive: true });
      fs.copyFileSync(path.join(s.dataDir, f), path.join(staging, 'data', f));
    }
    const manifest: ArchiveManifest = {
      format: ARCHIVE_FORMAT,
      createdAt: new Date().toISOString(),
      heliodor: (JSON.parse(fs.readFileSync(path.join(bootstrap.root, 'package.json'), 'utf8')) as { version: string }).version,
      database: { name: s.database, pgDump: pgDumpVersion, tables: counts },
      images: s.objectStore ? 0 : images.length,
      ...(s.objectStore ? { imagesLeftIn: s.objectStore } : {}),
      demoFiles,
    };
    fs.writeFileSync(path.join(staging, 'manifest.json'), `${JSON.stringify(manifest, null, 2)}\n`);
    fs.writeFileSync(path.join(staging, 'SHA256SUMS'), sumsOf(staging, filesBelow(staging)));

    const partial = `${file}.partial`;
    await tar.create({ file: partial, cwd: parent, portable: true }, [ARCHIVE_ROOT]);
    const fd = fs.openSync(partial, 'r');
    fs.fsyncSync(fd);
    fs.closeSync(fd);
    fs.renameSync(partial, file);

    const rows = Object.values(counts).reduce((a, b) => a + b, 0);
    process.stdout.write(
      `Backup written to ${file}: ${tables.length} tables (${rows} rows), ${s.objectStore ? `no images (the ${images.length} the database names stay in ${s.objectStore}: the object store is not backed up here; keep its versioning or replication on)` : `${images.length} images`}${demoFiles.length ? ', the demo\'s token secret and bench sheet' : ''}; ` +
        `${megabytes(fs.statSync(file).size)} in ${((Date.now() - started) / 1000).toFixed(1)} s.\n`,
    );
  } finally {
    await client.end().catch(() => undefined);
    fs.rmSync(parent, { recursive: true, force: true });
    fs.rmSync(`${file}.partial`, { force: true });
    if (startedCluster) cluster?.stop();
  }
}

main().catch((err: Error) => {
  process.stderr.write(`Backup failed: ${err.message}\n`);
  process.exit(1);
});
