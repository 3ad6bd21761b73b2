// Heliodor as `npm start` runs it — server/index.ts in a process of its own — told to stop with SIGTERM
// while a release upload trickles in: the upload finishes (201) within the grace period, while new
// connections are refused from the moment the signal arrives; an upload that outlasts the grace period
// is cut and the process still exits. At start, an unfinished upload's temporary file left in the
// firmware store is swept. Sources: SIGTERM as the polite request to terminate (POSIX signal.h,
// "Termination signal"); a refused TCP connection is ECONNREFUSED (POSIX connect()).
import { spawn, type ChildProcess } from 'node:child_process';
import crypto from 'node:crypto';
import fs from 'node:fs';
import http from 'node:http';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import { startTestApp, testPassword, type TestApp } from '../helpers/app';
import { testEnv } from '../helpers/env';
import { demoModel, keyPair, registerKey, signedUpload, type KeyPair, type SignedUpload } from './release-fixtures';
import { Release } from '../../server/db/models';

const root = path.resolve(__dirname, '../..');

let t: TestApp;
let key: KeyPair;
let modelId: string;
beforeAll(async () => {
  // The in-process app prepares the database (demo people, the model, a signing key); the child serves it.
  t = await startTestApp({ seed: 'demo' });
  key = keyPair('ed25519');
  await registerKey(t, key, 'Shutdown key');
  modelId = (await demoModel()).id;
});
afterAll(() => t.close());

type Child = { process: ChildProcess; port: number; storeDir: string; output: () => string; exited: Promise<number | null> };

/** Starts server/index.ts on the test database with its own data folder and store; resolves once it prints its ready line. */
async function startServer(graceS: number, leftovers: string[] = []): Promise<Child> {
  const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-stop-data-'));
  const storeDir = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-stop-store-'));
  for (const name of leftovers) fs.writeFileSync(path.join(storeDir, name), crypto.randomBytes(100));
  const c = t.sequelize.config;
  const env = {
    ...process.env,
    PORT: '0',
    HELIODOR_ENV: 'test',
    HELIODOR_DEMO: '0',
    HELIODOR_DATA: dataDir,
    HELIODOR_STORE: storeDir,
    DATABASE_URL: `postgres://${c.username}:${encodeURIComponent(String(c.password))}@${c.host}:${c.port}/${c.database}`,
    HELIODOR_JWT_SECRET: crypto.randomBytes(32).toString('base64url'),
    HELIODOR_SMTP_EXTERNAL: '1',
    HELIODOR_SMTP_PORT: String(testEnv().smtpPort),
    HELIODOR_LOG_FORMAT: 'pretty',
    HELIODOR_LOG_LEVEL: 'info',
    HELIODOR_SHUTDOWN_GRACE_S: String(graceS),
  };
  const child = spawn(process.execPath, ['--import', 'tsx', 'server/index.ts'], { cwd: root, env, stdio: ['ignore', 'pipe', 'pipe'] });
  let output = '';
  child.stdout!.on('data', (d) => (output += String(d)));
  child.stderr!.on('data', (d) => (output += String(d)));
  const exited = new Promise<number | null>((resolve) => child.once('exit', (code) => resolve(code)));
  const port = await new Promise<number>((resolve, reject) => {
    const look = () => {
      const m = /Heliodor ready at http:\/\/127\.0\.0\.1:(\d+)/.exec(output);
      if (m) resolve(Number(m[1]));
    };
    child.stdout!.on('data', look);
    void exited.then(() => reject(new Error(`the server exited before it was ready:\n${output}`)));
  });
  return { process: child, port, storeDir, output: () => output, exited };
}

async function signIn(port: number): Promise<string> {
  const res = await fetch(`http://127.0.0.1:${port}/api/auth/sign-in`, {
    method: 'POST',
    headers: { 'Content-Type': 'application/json' },
    body: JSON.stringify({ email: 'priya@fernhollow.example', password: testPassword }),
  });
  expect(res.status).toBe(200);
  return res.headers.getSetCookie().map((c) => c.split(';')[0]).join('; ');
}

/** A multipart upload written by hand: manifest and signature first, then the image in slices at the caller's pace. */
function slowUpload(port: number, cookie: string, upload: SignedUpload) {
  const boundary = `----heliodor${crypto.randomBytes(8).toString('hex')}`;
  const head = Buffer.concat([
    Buffer.from(`--${boundary}\r\nContent-Disposition: form-data; name="manifest"; filename="manifest.json"\r\nContent-Type: application/json\r\n\r\n`),
    upload.manifest,
    Buffer.from(`\r\n--${boundary}\r\nContent-Disposition: form-data; name="signature"\r\n\r\n${upload.signature}`),
    Buffer.from(`\r\n--${boundary}\r\nContent-Disposition: form-data; name="image"; filename="fw.bin"\r\nContent-Type: application/octet-stream\r\n\r\n`),
  ]);
  const tail = Buffer.from(`\r\n--${boundary}--\r\n`);
  const req = http.request({
    host: '127.0.0.1', port, method: 'POST', path: '/api/releases', agent: false,
    headers: { 'Content-Type': `multipart/form-data; boundary=${boundary}`, 'Content-Length': head.length + upload.image.length + tail.length, Cookie: cookie, 'X-Requested-With': 'heliodor' },
  });
  const answer = new Promise<{ status: number; body: string } | { error: string }>((resolve) => {
    req.on('response', (res) => {
      let body = '';
      res.on('data', (d) => (body += String(d)));
      res.on('end', () => resolve({ status: res.statusCode ?? 0, body }));
      res.on('error', (e) => resolve({ error: e.message }));
    });
    req.on('error', (e) => resolve({ error: (e as NodeJS.ErrnoException).code ?? e.message }));
  });
  req.write(head);
  // Settles when the slice is handed to the socket, or at once when the connection is gone.
  const write = (bytes: Buffer) => new Promise<void>((resolve) => (req.destroyed ? resolve() : req.write(bytes, () => resolve())));
  return { answer, write, finish: () => req.end(tail), image: upload.image };
}

/** Resolves once a new TCP connection to the port is refused (bounded: 10 s). */
async function refusedAt(port: number): Promise<string> {
  for (let i = 0; i < 200; i++) {
    const outcome = await new Promise<string>((resolve) => {
      const socket = net.connect(port, '127.0.0.1');
      socket.once('connect', () => {
        socket.destroy();
        resolve('connected');
      });
      socket.once('error', (e: NodeJS.ErrnoException) => resolve(e.code ?? e.message));
    });
    if (outcome !== 'connected') return outcome;
    await new Promise((r) => setTimeout(r, 50));
  }
  return 'still accepting';
}

async function untilIncomingIn(dir: string) {
  for (let i = 0; i < 500 && !fs.readdirSync(dir).some((n) => n.startsWith('.incoming-')); i++) await new Promise((r) => setTimeout(r, 20));
}

describe('stopping with SIGTERM', () => {
  test('when SIGTERM arrives during a slow upload, then new connections are refused, the upload completes with 201 and the process exits 0', async () => {
    const server = await startServer(20, ['.incoming-0123456789abcdef01234567']);
    try {
      // The unfinished upload of an earlier process was swept before the server listened.
      expect(fs.readdirSync(server.storeDir).filter((n) => n.startsWith('.incoming-'))).toEqual([]);
      const cookie = await signIn(server.port);
      const upload = slowUpload(server.port, cookie, signedUpload(key, { model: modelId, version: '2.9.0', counter: 9, image: crypto.randomBytes(256 * 1024) }));
      const slices = 16;
      const slice = upload.image.length / slices;
      await upload.write(upload.image.subarray(0, slice));
      await untilIncomingIn(server.storeDir); // the image is streaming into the store

      server.process.kill('SIGTERM');
      expect(await refusedAt(server.port)).toBe('ECONNREFUSED');
      // The rest of the image, a slice at a time, after the signal.
      for (let i = 1; i < slices; i++) {
        await new Promise((r) => setTimeout(r, 50));
        await upload.write(upload.image.subarray(i * slice, (i + 1) * slice));
      }
      upload.finish();
      const answer = await upload.answer;
      expect(answer).toMatchObject({ status: 201 });
      const created = JSON.parse((answer as { body: string }).body);
      expect(created).toMatchObject({ version: '2.9.0', state: 'draft' });
      expect(await server.exited).toBe(0);
      expect(await Release.count({ where: { id: created.id } })).toBe(1);
      expect(fs.readdirSync(server.storeDir)).toEqual([created.image.sha256]);
      expect(server.output()).toMatch(/SIGTERM: stopping/);
    } finally {
      server.process.kill('SIGKILL');
    }
  });

  test('when an upload outlasts the grace period, then its connection is cut, nothing is stored and the process still exits 0', async () => {
    const server = await startServer(1);
    try {
      const cookie = await signIn(server.port);
      const upload = slowUpload(server.port, cookie, signedUpload(key, { model: modelId, version: '2.9.1', counter: 9, image: crypto.randomBytes(64 * 1024) }));
      await upload.write(upload.image.subarray(0, 1024));
      await untilIncomingIn(server.storeDir);
      server.process.kill('SIGTERM'); // and the rest of the image never comes
      expect(await server.exited).toBe(0);
      const answer = await upload.answer;
      expect(answer).toHaveProperty('error');
      expect(await Release.count({ where: { version: '2.9.1' } })).toBe(0);
      expect(server.output()).toMatch(/cut off/);
    } finally {
      server.process.kill('SIGKILL');
    }
  });
});
