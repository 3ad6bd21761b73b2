// The firmware store after a crash: a process killed mid-upload (SIGKILL, so nothing of it runs after)
// leaves its hidden `.incoming-*` file; the next start sweeps such files and keeps every image.
// Digests: SHA-256 (FIPS 180-4) by node:crypto, which the store also uses, checked here only as names.
import { spawn } from 'node:child_process';
import crypto from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { Readable } from 'node:stream';
import { LocalImageStore } from '../../server/images/store';

const root = path.resolve(__dirname, '../..');

/** Starts a child that streams its standard input into the store, and kills it with SIGKILL once its temporary file holds bytes. */
async function crashMidUpload(dir: string): Promise<void> {
  const script = `
    const { LocalImageStore } = require(${JSON.stringify(path.join(root, 'server/images/store.ts'))});
    new LocalImageStore(${JSON.stringify(dir)}).receive(process.stdin);
  `;
  const child = spawn(process.execPath, ['--import', 'tsx', '-e', script], { cwd: root, stdio: ['pipe', 'ignore', 'inherit'] });
  child.stdin.write(crypto.randomBytes(64 * 1024));
  for (let i = 0; i < 500; i++) {
    const temp = fs.readdirSync(dir).find((n) => n.startsWith('.incoming-'));
    if (temp && fs.statSync(path.join(dir, temp)).size > 0) break;
    await new Promise((r) => setTimeout(r, 20));
  }
  const exited = new Promise((r) => child.once('exit', r));
  child.kill('SIGKILL');
  await exited;
}

describe('sweeping unfinished uploads', () => {
  test('when a process died mid-upload, then its .incoming file is left, and the sweep at the next start removes it and keeps the stored images', async () => {
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-sweep-'));
    try {
      const store = new LocalImageStore(dir);
      const image = crypto.randomBytes(1024);
      const received = await store.receive(Readable.from([image])).done;
      await received.commit();
      await crashMidUpload(dir);
      const before = fs.readdirSync(dir);
      expect(before.filter((n) => n.startsWith('.incoming-'))).toHaveLength(1);
      expect(before).toContain(received.sha256);

      const swept = await new LocalImageStore(dir).sweepIncoming();
      expect(swept).toEqual(before.filter((n) => n.startsWith('.incoming-')));
      expect(fs.readdirSync(dir)).toEqual([received.sha256]);
      expect(fs.readFileSync(path.join(dir, received.sha256)).equals(image)).toBe(true);
    } finally {
      fs.rmSync(dir, { recursive: true, force: true });
    }
  });

  test('when nothing was left behind, then the sweep removes nothing', async () => {
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-sweep-'));
    try {
      const store = new LocalImageStore(dir);
      const received = await store.receive(Readable.from([Buffer.from('image bytes')])).done;
      await received.commit();
      expect(await store.sweepIncoming()).toEqual([]);
      expect(fs.readdirSync(dir)).toEqual([received.sha256]);
    } finally {
      fs.rmSync(dir, { recursive: true, force: true });
    }
  });
});
