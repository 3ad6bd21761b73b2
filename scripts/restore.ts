// `npm run restore -- <file>`: fills an EMPTY data folder (and an empty firmware store) from a backup
// made by `npm run backup` (scripts/ops/archive.ts). It refuses a folder that holds anything, so it can
// never overwrite a live installation. Every file of the archive is checked against SHA256SUMS and
// every image against its SHA-256 name before anything is written; then a new PostgreSQL cluster is
// created in the data folder, the dump restored into it in one transaction (pg_restore), the images
// and the demo's files put in place, and the cluster stopped again: `npm start` takes over from there.
// New secrets are made for the restored folder (people sign in again).
import { spawnSync } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import * as tar from 'tar';
import { ARCHIVE_FORMAT, ARCHIVE_ROOT, bootstrap, filesBelow, megabytes, settings, sha256File, verifySums, type ArchiveManifest } from './ops/archive';

/** What a folder holds, ignoring the placeholder git keeps in an empty firmware store. */
const contents = (dir: string) => (fs.existsSync(dir) ? fs.readdirSync(dir).filter((n) => n !== '.gitkeep') : []);

async function main() {
  const source = process.argv[2];
  if (!source || process.argv.length > 3) {
    process.stderr.write('usage: npm run restore -- <file>   (into an empty data folder: HELIODOR_DATA, default .data)\n');
    process.exit(2);
  }
  const file = path.resolve(process.cwd(), source);
  if (!fs.existsSync(file)) throw new Error(`${file} does not exist`);
  const started = Date.now();
  const s = settings();
  if (s.databaseUrl) throw new Error('DATABASE_URL is set: a restore creates its own database cluster in the data folder; unset it.');
  for (const [what, dir] of [['data folder', s.dataDir], ['firmware store', s.storeDir]] as const) {
    const held = contents(dir);
    if (held.length) {
      throw new Error(`the ${what} ${dir} is not empty (${held.slice(0, 3).join(', ')}${held.length > 3 ? ', …' : ''}); a restore fills only an empty one. Point HELIODOR_DATA / HELIODOR_STORE at new folders, or move the old ones away first.`);
    }
  }

  // 1. Read and check everything before writing anything.
  const scratch = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-restore-'));
  let cluster: ReturnType<typeof bootstrap.pgCluster> | null = null;
  try {
    await tar.extract({ file, cwd: scratch, strict: true });
    const dir = path.join(scratch, ARCHIVE_ROOT);
    if (!fs.existsSync(path.join(dir, 'manifest.json'))) throw new Error(`${file} is not a Heliodor backup (no ${ARCHIVE_ROOT}/manifest.json)`);
    const manifest = JSON.parse(fs.readFileSync(path.join(dir, 'manifest.json'), 'utf8')) as ArchiveManifest;
    if (manifest.format !== ARCHIVE_FORMAT) throw new Error(`backup format ${manifest.format} is not one this version reads (${ARCHIVE_FORMAT})`);
    verifySums(dir);
    const images = fs.existsSync(path.join(dir, 'firmware-store')) ? filesBelow(path.join(dir, 'firmware-store')) : [];
    for (const name of images) {
      if (!/^[0-9a-f]{64}$/.test(name) || sha256File(path.join(dir, 'firmware-store', name)) !== name) throw new Error(`firmware-store/${name} is not an image named by its SHA-256`);
    }
    if (images.length !== manifest.images) throw new Error(`the archive holds ${images.length} images but its manifest says ${manifest.images}`);

    // 2. A new cluster in the empty data folder, and the database restored in one transaction.
    fs.mkdirSync(s.dataDir, { recursive: true });
    cluster = bootstrap.pgCluster(s.dataDir, s.pgPort);
    cluster.start();
    cluster.psql(`CREATE DATABASE ${s.database}`);
    const restore = spawnSync(
      path.join(bootstrap.postgresBinDir(), 'pg_restore'),
      ['--exit-on-error', '--single-transaction', '--no-owner', '--no-privileges', `--dbname=${cluster.url(s.database)}`, path.join(dir, 'database.dump')],
      { stdio: ['ignore', 'inherit', 'pipe'], encoding: 'utf8' },
    );
    if (restore.status !== 0) throw new Error(`pg_restore failed: ${restore.stderr || `exit ${restore.status}`}`);

    // 3. The images, and the demo's own files (the token secret private to its owner, as the server makes it).
    fs.mkdirSync(s.storeDir, { recursive: true });
    for (const name of images) fs.copyFileSync(path.join(dir, 'firmware-store', name), path.join(s.storeDir, name));
    for (const f of manifest.demoFiles) {
      const to = path.join(s.dataDir, f);
      fs.mkdirSync(path.dirname(to), { recursive: true, mode: 0o700 });
      fs.copyFileSync(path.join(dir, 'data', f), to);
      if (f.startsWith('secrets/')) fs.chmodSync(to, 0o600);
    }
    const rows = Object.values(manifest.database.tables).reduce((a, b) => a + b, 0);
    process.stdout.write(
      `Restored ${path.basename(file)} (made ${manifest.createdAt}) into ${s.dataDir}: ${Object.keys(manifest.database.tables).length} tables (${rows} rows), ` +
        `${manifest.imagesLeftIn ? `no images (the backup left them in ${manifest.imagesLeftIn}; point HELIODOR_IMAGE_STORE=s3 at that bucket)` : `${images.length} images in ${s.storeDir}`}; ${megabytes(fs.statSync(file).size)} in ${((Date.now() - started) / 1000).toFixed(1)} s. Start it with npm start.\n`,
    );
  } catch (err) {
    // Nothing half-restored: both folders were empty, so they are emptied again.
    cluster?.stop();
    cluster = null;
    for (const dir of [s.dataDir, s.storeDir]) for (const name of contents(dir)) fs.rmSync(path.join(dir, name), { recursive: true, force: true });
    throw err;
  } finally {
    cluster?.stop();
    fs.rmSync(scratch, { recursive: true, force: true });
  }
}

main().catch((err: Error) => {
  process.stderr.write(`Restore failed: ${err.message}\n`);
  process.exit(1);
});
