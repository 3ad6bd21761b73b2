// All environment settings, validated once at boot (fail fast with a readable message).
import fs from 'node:fs';
import path from 'node:path';
import crypto from 'node:crypto';
import { z } from 'zod';

const root = path.resolve(__dirname, '..');

const envSchema = z.object({
  PORT: z.coerce.number().int().min(0).max(65535).default(8080),
  HELIODOR_ENV: z.enum(['demo', 'production', 'test']).default('demo'),
  HELIODOR_DATA: z.string().default('.data'),
  HELIODOR_STORE: z.string().default('firmware-store'),
  HELIODOR_PG_PORT: z.coerce.number().int().min(1).max(65535).default(54329),
  HELIODOR_DB_NAME: z.string().regex(/^[a-z_][a-z0-9_]*$/).default('heliodor'),
  DATABASE_URL: z.string().optional(),
  HELIODOR_SMTP_PORT: z.coerce.number().int().min(1).max(65535).default(2525),
  HELIODOR_DEMO: z.enum(['0', '1']).default('1'),
  HELIODOR_DEMO_PASSWORD: z.string().min(12).max(72).default('fernhollow-demo'),
  HELIODOR_JWT_SECRET: z.string().min(32).optional(),
  HELIODOR_DATA_KEY: z.string().min(32).optional(),
  HELIODOR_PUBLIC_URL: z.string().url().optional(),
  HELIODOR_IMAGE_LIMIT: z.coerce.number().int().min(1024).default(16 * 1024 * 1024),
  HELIODOR_DEVICE_RATE: z.coerce.number().int().min(1).default(60),
  HELIODOR_WORKERS: z.coerce.number().int().min(1).max(64).default(1),
  HELIODOR_IMAGE_STORE: z.enum(['local', 's3']).default('local'),
  HELIODOR_S3_BUCKET: z.string().regex(/^[a-z0-9][a-z0-9.-]{1,61}[a-z0-9]$/, 'an S3 bucket name').optional(),
  HELIODOR_S3_PREFIX: z.string().regex(/^([A-Za-z0-9!_.*'()-]+\/)*$/, 'empty, or folder names each ending in /').default(''),
  HELIODOR_S3_REGION: z.string().min(1).default('us-east-1'),
  HELIODOR_S3_ENDPOINT: z.string().url().optional(),
  HELIODOR_S3_FORCE_PATH_STYLE: z.enum(['0', '1']).optional(),
  HELIODOR_S3_ACCESS_KEY_ID: z.string().min(1).optional(),
  HELIODOR_S3_SECRET_ACCESS_KEY: z.string().min(1).optional(),
  HELIODOR_S3_URL_TTL_S: z.coerce.number().int().min(60).max(7 * 86_400).default(900),
  HELIODOR_DB_POOL: z.coerce.number().int().min(1).max(200).default(20),
  HELIODOR_SHUTDOWN_GRACE_S: z.coerce.number().min(0).max(3600).default(20),
  HELIODOR_LOG_LEVEL: z.enum(['fatal', 'error', 'warn', 'info', 'debug', 'trace', 'silent']).default('info'),
  HELIODOR_LOG_FORMAT: z.enum(['pretty', 'json']).optional(),
  HELIODOR_DEMO_LIVE: z.enum(['0', '1']).default('1'),
  HELIODOR_DEMO_SPEED: z.coerce.number().min(1).max(3600).default(1),
  HELIODOR_DEMO_FAIL_RATE: z.coerce.number().min(0).max(1).default(0.02),
  SMTP_HOST: z.string().optional(),
  SMTP_PORT: z.coerce.number().int().optional(),
  SMTP_USER: z.string().optional(),
  SMTP_PASSWORD: z.string().optional(),
  SMTP_SECURE: z.enum(['0', '1']).default('0'),
  MAIL_FROM: z.string().default('Heliodor <heliodor@localhost>'),
});

export type Config = ReturnType<typeof loadConfig>;

/** A secret of the data folder (`<data>/secrets/<name>`, mode 0600), made on first use. */
export function readSecret(dataDir: string, name: string): string {
  const dir = path.join(dataDir, 'secrets');
  fs.mkdirSync(dir, { recursive: true, mode: 0o700 });
  const file = path.join(dir, name);
  if (!fs.existsSync(file)) {
    fs.writeFileSync(file, crypto.randomBytes(32).toString('base64url'), { mode: 0o600 });
  }
  return fs.readFileSync(file, 'utf8').trim();
}

export function loadConfig(env: NodeJS.ProcessEnv = process.env) {
  const parsed = envSchema.safeParse(env);
  if (!parsed.success) {
    const lines = parsed.error.issues.map((i) => `  ${i.path.join('.')}: ${i.message}`);
    throw new Error(`Invalid Heliodor settings:\n${lines.join('\n')}`);
  }
  const e = parsed.data;
  if (e.HELIODOR_IMAGE_STORE === 's3' && !e.HELIODOR_S3_BUCKET) {
    throw new Error('Invalid Heliodor settings:\n  HELIODOR_S3_BUCKET: required when HELIODOR_IMAGE_STORE=s3');
  }
  if (Boolean(e.HELIODOR_S3_ACCESS_KEY_ID) !== Boolean(e.HELIODOR_S3_SECRET_ACCESS_KEY)) {
    throw new Error('Invalid Heliodor settings:\n  HELIODOR_S3_ACCESS_KEY_ID, HELIODOR_S3_SECRET_ACCESS_KEY: give both or neither');
  }
  const production = e.HELIODOR_ENV === 'production';
  const dataDir = path.resolve(root, e.HELIODOR_DATA);
  const demo = !production && e.HELIODOR_DEMO === '1';
  const logFormat: 'pretty' | 'json' = e.HELIODOR_LOG_FORMAT ?? (production ? 'json' : 'pretty');
  const databaseUrl =
    e.DATABASE_URL ??
    `postgres://heliodor:${encodeURIComponent(readSecret(dataDir, 'pg-password'))}@127.0.0.1:${e.HELIODOR_PG_PORT}/${e.HELIODOR_DB_NAME}`;
  return {
    env: e.HELIODOR_ENV,
    production,
    /** Demo conveniences: seed, printed sign-ins, dev mailbox. Off in production. */
    demo,
    /**
     * The living demo: the demo fleet checks in with this server through the device API (server/demo/).
     * `speed` runs its clock faster than the wall clock; `failRate` is the share of installs that fail.
     */
    demoLive: { enabled: demo && e.HELIODOR_DEMO_LIVE === '1', speed: e.HELIODOR_DEMO_SPEED, failRate: e.HELIODOR_DEMO_FAIL_RATE },
    devMailbox: !production,
    port: e.PORT,
    dataDir,
    storeDir: path.resolve(root, e.HELIODOR_STORE),
    /** Where release images live: the local folder (storeDir), or S3-compatible object storage. */
    imageStore:
      e.HELIODOR_IMAGE_STORE === 's3'
        ? {
            kind: 's3' as const,
            bucket: e.HELIODOR_S3_BUCKET!,
            prefix: e.HELIODOR_S3_PREFIX,
            region: e.HELIODOR_S3_REGION,
            endpoint: e.HELIODOR_S3_ENDPOINT,
            // A custom endpoint is usually an S3-compatible server, which wants path-style URLs.
            forcePathStyle: e.HELIODOR_S3_FORCE_PATH_STYLE ? e.HELIODOR_S3_FORCE_PATH_STYLE === '1' : Boolean(e.HELIODOR_S3_ENDPOINT),
            credentials: e.HELIODOR_S3_ACCESS_KEY_ID ? { accessKeyId: e.HELIODOR_S3_ACCESS_KEY_ID, secretAccessKey: e.HELIODOR_S3_SECRET_ACCESS_KEY! } : undefined,
            urlTtlS: e.HELIODOR_S3_URL_TTL_S,
          }
        : { kind: 'local' as const },
    /** Express processes on one port (node:cluster); 1 runs the server in this process. */
    workers: e.HELIODOR_WORKERS,
    outboxDir: path.join(dataDir, 'outbox'),
    databaseUrl,
    dbPool: e.HELIODOR_DB_POOL,
    /** On SIGTERM or SIGINT: how long requests in flight may take to finish before their connections are cut. */
    shutdownGraceMs: e.HELIODOR_SHUTDOWN_GRACE_S * 1000,
    jwtSecret: e.HELIODOR_JWT_SECRET ?? readSecret(dataDir, 'jwt-secret'),
    /** Seals secrets the server must read back (second-factor secrets); kept outside the database. */
    dataKey: e.HELIODOR_DATA_KEY ?? readSecret(dataDir, 'data-key'),
    publicUrl: e.HELIODOR_PUBLIC_URL,
    demoPassword: e.HELIODOR_DEMO_PASSWORD,
    imageLimitBytes: e.HELIODOR_IMAGE_LIMIT,
    deviceRatePerMinute: e.HELIODOR_DEVICE_RATE,
    logLevel: e.HELIODOR_LOG_LEVEL,
    /** Lines for people (pino-pretty) outside production, one JSON object per line in production. */
    logFormat,
    webDir: path.join(root, 'dist'),
    smtp: production
      ? {
          host: e.SMTP_HOST ?? 'localhost',
          port: e.SMTP_PORT ?? 587,
          secure: e.SMTP_SECURE === '1',
          auth: e.SMTP_USER ? { user: e.SMTP_USER, pass: e.SMTP_PASSWORD ?? '' } : undefined,
        }
      : { host: '127.0.0.1', port: e.HELIODOR_SMTP_PORT, secure: false, auth: undefined },
    mailFrom: e.MAIL_FROM,
  };
}
