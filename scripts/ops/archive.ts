// The backup archive shared by `npm run backup` and `npm run restore`: one POSIX tar file holding
//
//   heliodor-backup/manifest.json      what the archive holds (format, time, versions, counts)
//   heliodor-backup/SHA256SUMS         the SHA-256 of every other file, in `sha256sum` form
//   heliodor-backup/database.dump      pg_dump in its custom format (compressed, restored with pg_restore)
//   heliodor-backup/firmware-store/…   every image the database names, under its SHA-256
//   heliodor-backup/data/…             the demo's own files, when the data folder has them: the demo
//                                      loggers' token secret and bench sheet, so a restored demo keeps checking in
//
// Never in it: the session-signing secret and the database password (a restore makes new ones).
import crypto from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';

export const ARCHIVE_ROOT = 'heliodor-backup';
export const ARCHIVE_FORMAT = 1;
/** Files of the data folder a demo needs after a restore (relative to the data folder). */
export const DEMO_FILES = ['secrets/demo-logger-tokens', 'demo/bench-sheet.csv'];

export type ArchiveManifest = {
  format: number;
  createdAt: string;
  heliodor: string;
  database: { name: string; pgDump: string; tables: Record<string, number> };
  images: number;
  /**
   * Where the images are when they are not in the archive: the object store (HELIODOR_IMAGE_STORE=s3),
   * as s3://bucket/prefix. Absent: the archive holds every image the database names.
   */
  imagesLeftIn?: string;
  demoFiles: string[];
};

// eslint-disable-next-line @typescript-eslint/no-require-imports
export const bootstrap = require('../lib/bootstrap.js') as {
  root: string;
  postgresBinDir(): string;
  pgCluster(dataDir: string, port: number, options?: { durable?: boolean }): {
    port: number;
    user: string;
    password(): string;
    url(database: string): string;
    initialized(): boolean;
    running(): boolean;
    start(): void;
    stop(): void;
    psql(sql: string, database?: string): void;
    databaseExists(name: string): boolean;
  };
};

/** The settings `npm start` uses, read the same way (scripts/start.js, server/config.ts). */
export function settings(env: NodeJS.ProcessEnv = process.env) {
  const root = bootstrap.root;
  return {
    dataDir: path.resolve(root, env.HELIODOR_DATA || '.data'),
    storeDir: path.resolve(root, env.HELIODOR_STORE || 'firmware-store'),
    pgPort: Number(env.HELIODOR_PG_PORT || 54329),
    database: env.HELIODOR_DB_NAME || 'heliodor',
    databaseUrl: env.DATABASE_URL || null,
    /** With HELIODOR_IMAGE_STORE=s3 the images are in object storage: s3://bucket/prefix; null for the local folder. */
    objectStore: env.HELIODOR_IMAGE_STORE === 's3' ? `s3://${env.HELIODOR_S3_BUCKET ?? '?'}/${env.HELIODOR_S3_PREFIX ?? ''}` : null,
  };
}

export function sha256File(file: string): string {
  const hash = crypto.createHash('sha256');
  const fd = fs.openSync(file, 'r');
  try {
    const buffer = Buffer.alloc(1 << 20);
    for (;;) {
      const n = fs.readSync(fd, buffer, 0, buffer.length, null);
      if (n === 0) break;
      hash.update(buffer.subarray(0, n));
    }
  } finally {
    fs.closeSync(fd);
  }
  return hash.digest('hex');
}

/** Every regular file below a folder, as paths relative to it with forward slashes, sorted. */
export function filesBelow(dir: string): string[] {
  const out: string[] = [];
  const visit = (rel: string) => {
    for (const entry of fs.readdirSync(path.join(dir, rel), { withFileTypes: true })) {
      const child = rel ? `${rel}/${entry.name}` : entry.name;
      if (entry.isDirectory()) visit(child);
      else if (entry.isFile()) out.push(child);
      else throw new Error(`${child} is neither a file nor a folder`);
    }
  };
  visit('');
  return out.sort();
}

/** `sha256sum` lines ("<hex>  <path>") for the given files of a folder. */
export function sumsOf(dir: string, files: string[]): string {
  return files.map((f) => `${sha256File(path.join(dir, f))}  ${f}\n`).join('');
}

/** Checks a folder against its SHA256SUMS: every file listed, every listed file present and intact. */
export function verifySums(dir: string): string[] {
  const text = fs.readFileSync(path.join(dir, 'SHA256SUMS'), 'utf8');
  const listed = new Map<string, string>();
  for (const line of text.split('\n')) {
    if (line === '') continue;
    const m = /^([0-9a-f]{64}) {2}(\S.*)$/.exec(line);
    if (!m) throw new Error(`SHA256SUMS has a line that is not "<sha256>  <path>": ${line}`);
    listed.set(m[2], m[1]);
  }
  const present = filesBelow(dir).filter((f) => f !== 'SHA256SUMS');
  const unlisted = present.filter((f) => !listed.has(f));
  if (unlisted.length) throw new Error(`files not in SHA256SUMS: ${unlisted.join(', ')}`);
  for (const [file, sum] of listed) {
    if (!fs.existsSync(path.join(dir, file))) throw new Error(`${file} is listed in SHA256SUMS but missing`);
    if (sha256File(path.join(dir, file)) !== sum) throw new Error(`${file} does not match its SHA-256 in SHA256SUMS: the archive is damaged`);
  }
  return [...listed.keys()];
}

export const megabytes = (bytes: number) => `${(bytes / 1024 / 1024).toFixed(1)} MB`;
