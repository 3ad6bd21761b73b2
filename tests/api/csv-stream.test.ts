// The CSV exports' writer behind the API's compression (server/fleet/routes.ts csvStream, server/http/web.ts
// apiCompression) with a client that reads slowly, so the writer waits for 'drain' many times: the body
// arrives whole (gunzipped by Node's zlib, an implementation of RFC 1952 outside the writer), and the
// waits leave no 'drain' listeners behind on the compression's gzip stream, where the middleware puts them.
import http from 'node:http';
import type { AddressInfo } from 'node:net';
import zlib from 'node:zlib';
import express from 'express';
import { csvStream } from '../../server/fleet/routes';
import { apiCompression } from '../../server/http/web';

// Every gzip stream the compression middleware makes, so the test can count the listeners on it.
jest.mock('zlib', () => {
  const real = jest.requireActual<typeof import('zlib')>('zlib');
  return {
    ...real,
    createGzip: (options?: import('zlib').ZlibOptions) => {
      const gzip = real.createGzip(options);
      ((globalThis as { madeGzips?: unknown[] }).madeGzips ??= []).push(gzip);
      return gzip;
    },
  };
});
const madeGzips = () => ((globalThis as { madeGzips?: import('zlib').Gzip[] }).madeGzips ??= []);

test('when a slow client downloads a large compressed export, then every chunk arrives and no wait leaves a listener behind', async () => {
  let mostDrainListeners = 0;
  // Chunks of 24 KB: each one fills the gzip stream's buffer (16 KB), so the writer waits after every write.
  const chunk = (i: number) => `${i},${'Kettle Green Pump House,'.repeat(1000)}\n`;
  const chunks = 200;
  let waits = 0;
  const app = express();
  app.use(apiCompression());
  app.get('/export.csv', async (_req, res) => {
    // Count the writes the stream refused for now (each one a wait for 'drain').
    const write = res.write.bind(res) as (c: string) => boolean;
    res.write = ((c: string) => {
      const ok = write(c);
      if (!ok) waits += 1;
      return ok;
    }) as typeof res.write;
    const send = csvStream(res, 'export.csv');
    for (let i = 0; i < chunks; i++) {
      await send(chunk(i));
      mostDrainListeners = Math.max(mostDrainListeners, ...madeGzips().map((g) => g.listenerCount('drain')));
    }
    res.end();
  });
  const server = app.listen(0, '127.0.0.1');
  await new Promise((resolve) => server.once('listening', resolve));
  try {
    const { port } = server.address() as AddressInfo;
    const body = await new Promise<Buffer>((resolve, reject) => {
      http.get({ host: '127.0.0.1', port, path: '/export.csv', headers: { 'Accept-Encoding': 'gzip' } }, (res) => {
        expect(res.headers['content-encoding']).toBe('gzip');
        const parts: Buffer[] = [];
        // Read a little at a time: pause after each piece, resume shortly after.
        res.on('data', (part: Buffer) => {
          parts.push(part);
          res.pause();
          setTimeout(() => res.resume(), 2);
        });
        res.on('end', () => resolve(Buffer.concat(parts)));
        res.on('error', reject);
      }).on('error', reject);
    });
    const lines = zlib.gunzipSync(body).toString('utf8').trimEnd().split('\n');
    expect(lines).toHaveLength(chunks);
    expect(lines.map((l) => Number(l.split(',')[0]))).toEqual(Array.from({ length: chunks }, (_, i) => i));
    expect(waits).toBeGreaterThan(10);
    expect(madeGzips()).toHaveLength(1);
    // The middleware's own listener and the writer's one, whatever the number of waits.
    expect(mostDrainListeners).toBeLessThanOrEqual(2);
  } finally {
    await new Promise((resolve) => server.close(resolve));
  }
});
