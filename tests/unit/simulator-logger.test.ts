import { createHash, generateKeyPairSync, randomBytes } from 'node:crypto';
import semver from 'semver';
import { canonicalManifest, parsePublicKeyPem, signManifest } from '../../server/images/manifest';
import { VirtualLogger, parseContentRange, retryAfterSeconds, type CheckInRequest, type LoggerEvent, type Offer } from '../../scripts/simulator/logger';
import { seededRandom } from '../../scripts/simulator/random';

// The virtual logger against a fake device API kept to the contract (DEVICE_API.md) and RFC 9110
// (§14.2 Range, §14.4 Content-Range, §13.1.5 If-Range, §8.8.3 ETag, §10.2.3 Retry-After). Digests are
// checked with node:crypto's SHA-256, versions with the semver package.
const BASE = 'http://127.0.0.1:8080';
const MODEL = '6f1c2d3e-4a5b-4c6d-8e9f-0a1b2c3d4e5f';
const RELEASE = '11111111-2222-4333-8444-555555555555';
const START = new Date('2026-06-21T10:00:00Z');
const sha256 = (bytes: Uint8Array) => createHash('sha256').update(bytes).digest('hex');

const pair = generateKeyPairSync('ed25519');
const privatePem = String(pair.privateKey.export({ type: 'pkcs8', format: 'pem' }));
const publicKey = parsePublicKeyPem(String(pair.publicKey.export({ type: 'spki', format: 'pem' })));

function makeRelease(image: Buffer, version = '2.4.0', counter = 5): Offer {
  const manifest = canonicalManifest({
    board_revisions: ['B', 'C'], format: 1, image_sha256: sha256(image), image_size: image.length,
    issued_at: '2026-11-30T10:00:00Z', model: MODEL, security_counter: counter, version,
  });
  return {
    release: RELEASE, version, security_counter: counter, manifest: Buffer.from(manifest).toString('base64'),
    signature: signManifest(manifest, privatePem), key_id: publicKey.keyId, algorithm: 'ed25519',
    image: { url: `/api/device/v1/images/${sha256(image)}`, sha256: sha256(image), size: image.length },
  };
}

type Call = { method: string; url: string; headers: Record<string, string>; body: CheckInRequest | null };
type CheckInAnswer = { status: number; headers?: Record<string, string>; body?: unknown };

/** A fake device API: check-in answers from a queue (default: 200, 900 s, the current offer), images with single byte ranges. */
function fakeServer(options: { image?: Buffer; served?: () => Buffer; offer?: Offer | null } = {}) {
  const calls: Call[] = [];
  const answers: CheckInAnswer[] = [];
  const state = { offer: options.offer ?? null, badStart: false };
  const fetch: typeof globalThis.fetch = async (input: string | URL | Request, init?: RequestInit) => {
    const url = new URL(String(input));
    const headers = Object.fromEntries(Object.entries((init?.headers ?? {}) as Record<string, string>).map(([k, v]) => [k.toLowerCase(), v]));
    const method = init?.method ?? 'GET';
    calls.push({ method, url: url.toString(), headers, body: init?.body ? JSON.parse(String(init.body)) : null });
    if (url.origin !== BASE) throw new Error(`the logger called ${url.origin}`);
    if (url.pathname === '/api/device/v1/check-in') {
      const answer = answers.shift() ?? { status: 200, body: { server_time: new Date().toISOString(), next_check_in_s: 900, config: null, offer: state.offer } };
      return new Response(answer.body === undefined ? null : JSON.stringify(answer.body), {
        status: answer.status,
        headers: { 'Content-Type': answer.status === 200 ? 'application/json' : 'application/problem+json', ...answer.headers },
      });
    }
    const image = options.served?.() ?? options.image!;
    const etag = `"${sha256(image)}"`;
    const range = /^bytes=(\d+)-$/.exec(headers.range ?? '');
    const ifRange = headers['if-range'];
    if (range && (!ifRange || ifRange === etag)) {
      const start = Number(range[1]) + (state.badStart ? 1 : 0);
      if (start >= image.length) return new Response(null, { status: 416, headers: { 'Content-Range': `bytes */${image.length}` } });
      return new Response(new Uint8Array(image.subarray(start)), {
        status: 206,
        headers: { ETag: etag, 'Content-Range': `bytes ${start}-${image.length - 1}/${image.length}`, 'Accept-Ranges': 'bytes' },
      });
    }
    return new Response(new Uint8Array(image), { status: 200, headers: { ETag: etag, 'Accept-Ranges': 'bytes' } });
  };
  return { calls, answers, state, fetch, checkIns: () => calls.filter((c) => c.method === 'POST').map((c) => c.body!) };
}

function makeLogger(server: ReturnType<typeof fakeServer>, options: { interruptRate?: number; failRate?: number; seed?: number; board?: string } = {}) {
  let now = START;
  const events: LoggerEvent[] = [];
  const logger = new VirtualLogger(
    { serial: 'FL2-02401', token: 'hlt_' + 'A'.repeat(43), board: options.board ?? 'B', firmware: '2.3.1', securityCounter: 4, modelId: MODEL },
    {
      baseUrl: BASE,
      fetch: server.fetch,
      clock: () => now,
      random: seededRandom(options.seed ?? 1),
      trustedKeys: [publicKey],
      interruptRate: options.interruptRate ?? 0,
      failRate: options.failRate ?? 0,
      maxDownloadAttempts: 50,
      onEvent: (e) => events.push(e),
    },
  );
  return { logger, events, setNow: (d: Date) => (now = d), now: () => now };
}

describe('the virtual logger checking in', () => {
  test('when it checks in, then it sends the bearer token and a body within the contract’s types and ranges', async () => {
    const server = fakeServer();
    const { logger } = makeLogger(server);
    await logger.checkIn(START);
    const [call] = server.calls;
    expect(call.headers.authorization).toBe(`Bearer hlt_${'A'.repeat(43)}`);
    expect(call.url).toBe(`${BASE}/api/device/v1/check-in`);
    const body = call.body!;
    expect(semver.valid(body.firmware)).toBe(body.firmware); // strict semantic version (semver package)
    expect(body.board).toBe('B');
    expect(Number.isInteger(body.security_counter) && body.security_counter >= 0).toBe(true);
    expect(Number.isInteger(body.uptime_s) && body.uptime_s >= 0).toBe(true);
    expect(['power_on', 'watchdog', 'brownout', 'software', 'exception', 'external', 'unknown']).toContain(body.reset_reason);
    expect(body.rssi_dbm).toBeGreaterThanOrEqual(-120);
    expect(body.rssi_dbm).toBeLessThanOrEqual(0);
    expect(body.supply_v).toBeGreaterThanOrEqual(0);
    expect(body.supply_v).toBeLessThanOrEqual(60);
    for (const key of ['bus_v', 'current_a', 'power_w', 'energy_wh', 'temp_c'] as const) expect(Number.isFinite(body.readings[key])).toBe(true);
    expect(Buffer.byteLength(JSON.stringify(body))).toBeLessThan(16 * 1024);
  });

  test('when the server answers next_check_in_s 900, then the logger is due again 900 s later and not a second before', async () => {
    const server = fakeServer();
    const { logger } = makeLogger(server);
    await logger.checkIn(START);
    expect(logger.due(new Date(START.getTime() + 899_000))).toBe(false);
    expect(logger.due(new Date(START.getTime() + 900_000))).toBe(true);
  });

  test.each([429, 503])('when the server answers %i with Retry-After: 120, then the logger waits 120 s and re-sends its undelivered report', async (status) => {
    const server = fakeServer();
    const { logger } = makeLogger(server);
    server.answers.push({ status, headers: { 'Retry-After': '120' }, body: { type: 'about:blank', title: 'busy', status } });
    const delivered = await logger.report({ release: RELEASE, state: 'downloading' });
    expect(delivered).toBe(false);
    expect(logger.nextCheckInAt.getTime()).toBe(START.getTime() + 120_000);
    await logger.checkIn(new Date(START.getTime() + 120_000));
    expect(server.checkIns()[1].report).toEqual({ release: RELEASE, state: 'downloading' });
    expect(logger.pendingReport).toBeNull();
  });

  test('when the server sends a measurement profile, then the logger applies it and names its version at the next check-in', async () => {
    const server = fakeServer();
    const { logger } = makeLogger(server);
    const config = { version: 3, shunt_ohm: 0.01, max_current_a: 8, current_lsb_a: 0.00025, calibration: 2048, power_lsb_w: 0.00625, bus_v_max: 36, temp_resolution_bits: 12, sample_interval_s: 60 };
    server.answers.push({ status: 200, body: { server_time: START.toISOString(), next_check_in_s: 900, config, offer: null, some_future_field: true } });
    await logger.checkIn(START);
    expect(server.checkIns()[0].config_version).toBe(0);
    expect(logger.config).toEqual(config);
    await logger.checkIn(new Date(START.getTime() + 900_000));
    expect(server.checkIns()[1].config_version).toBe(3);
  });

  test('when the server refuses a report with 409 (a release not offered to this logger), then the logger drops it and the next check-in carries no report', async () => {
    // DEVICE_API.md, "Install report": a refused report is dropped, or every check-in would carry it again.
    const server = fakeServer();
    const { logger } = makeLogger(server);
    server.answers.push({ status: 409, body: { type: 'https://heliodor.example/problems/conflict', title: 'Conflict', status: 409 } });
    const delivered = await logger.report({ release: RELEASE, state: 'failed', reason: 'storage' });
    expect(delivered).toBe(false);
    expect(logger.pendingReport).toBeNull();
    await logger.checkIn(logger.nextCheckInAt);
    expect(server.checkIns()[1].report).toBeUndefined();
  });

  test('when the server refuses the token (401), then the logger stops checking in', async () => {
    const server = fakeServer();
    const { logger } = makeLogger(server);
    server.answers.push({ status: 401, body: { type: 'about:blank', title: 'Unauthorized', status: 401 } });
    const result = await logger.checkIn(START);
    expect(result.ok).toBe(false);
    expect(logger.refused).toBe(true);
    expect(logger.due(new Date(START.getTime() + 86_400_000))).toBe(false);
  });

  test('when Retry-After and Content-Range are read, then they follow RFC 9110 (§10.2.3 delay-seconds, §14.4 incl-range / complete-length)', () => {
    expect(retryAfterSeconds('120')).toBe(120);
    expect(retryAfterSeconds('Fri, 31 Dec 1999 23:59:59 GMT')).toBeNull();
    expect(parseContentRange('bytes 42-1233/1234')).toEqual({ start: 42, end: 1233, total: 1234 });
    expect(parseContentRange('bytes 42-1233/*')).toBeNull();
    expect(parseContentRange('bytes 1233-42/1234')).toBeNull();
    expect(parseContentRange('bytes 0-1234/1234')).toBeNull();
  });
});

describe('the virtual logger downloading an image', () => {
  test('when the link drops again and again, then every resumption asks for exactly the missing bytes with If-Range, and the image is whole (SHA-256 as node:crypto)', async () => {
    const image = randomBytes(50_000);
    const server = fakeServer({ image });
    const { logger, events } = makeLogger(server, { interruptRate: 0.8, seed: 3 });
    const result = await logger.download(makeRelease(image));
    expect(result.ok).toBe(true);
    if (result.ok) expect(sha256(result.bytes)).toBe(sha256(image));
    const gets = server.calls.filter((c) => c.method === 'GET');
    expect(events.filter((e) => e.kind === 'interrupted').length).toBeGreaterThan(1);
    expect(gets.length).toBeGreaterThan(2);
    expect(gets[0].headers.range).toBeUndefined();
    let have = 0;
    for (const [i, e] of events.filter((x) => x.kind === 'interrupted').entries()) {
      if (e.kind !== 'interrupted') continue;
      const next = gets[i + 1];
      if (e.have === 0) expect(next.headers.range).toBeUndefined();
      else {
        expect(next.headers.range).toBe(`bytes=${e.have}-`);
        expect(next.headers['if-range']).toBe(`"${sha256(image)}"`);
      }
      expect(e.have).toBeGreaterThanOrEqual(have);
      have = e.have;
    }
  });

  test('when the image changed between attempts (If-Range does not match, full 200), then the logger drops its partial bytes and keeps the new whole image', async () => {
    const first = randomBytes(20_000);
    const second = randomBytes(20_000);
    let served = first;
    const server = fakeServer({ served: () => served });
    const { logger } = makeLogger(server, { interruptRate: 1, seed: 5 });
    const offer = makeRelease(second);
    (logger as unknown as { env: { maxDownloadAttempts: number } }).env.maxDownloadAttempts = 1;
    const partial = await logger.download(offer);
    expect(partial.ok).toBe(false);
    served = second;
    (logger as unknown as { env: { interruptRate: number; maxDownloadAttempts: number } }).env.interruptRate = 0;
    (logger as unknown as { env: { maxDownloadAttempts: number } }).env.maxDownloadAttempts = 3;
    const whole = await logger.download(offer);
    expect(whole.ok).toBe(true);
    if (whole.ok) expect(sha256(whole.bytes)).toBe(sha256(second));
  });

  test('when a 206 does not start where the logger stopped, then it does not splice it in but starts over', async () => {
    const image = randomBytes(30_000);
    const server = fakeServer({ image });
    const { logger, events } = makeLogger(server, { interruptRate: 1, seed: 9 });
    const env = (logger as unknown as { env: { interruptRate: number; maxDownloadAttempts: number } }).env;
    env.maxDownloadAttempts = 1;
    await logger.download(makeRelease(image));
    server.state.badStart = true;
    env.interruptRate = 0;
    env.maxDownloadAttempts = 1;
    const spliced = await logger.download(makeRelease(image));
    expect(spliced.ok).toBe(false);
    expect(events.some((e) => e.kind === 'error' && /206 with Content-Range/.test(e.message))).toBe(true);
    server.state.badStart = false;
    env.maxDownloadAttempts = 2;
    const whole = await logger.download(makeRelease(image));
    expect(whole.ok).toBe(true);
    if (whole.ok) expect(sha256(whole.bytes)).toBe(sha256(image));
  });

  test('when an offer points the image at another server, then the logger does not fetch it and fails the install as other', async () => {
    const image = randomBytes(1000);
    const server = fakeServer({ image });
    const { logger } = makeLogger(server);
    const offer = { ...makeRelease(image), image: { ...makeRelease(image).image, url: 'http://203.0.113.9/image.bin' } };
    const result = await logger.download(offer);
    expect(result).toMatchObject({ ok: false, reason: 'other' });
    expect(server.calls.filter((c) => c.method === 'GET')).toHaveLength(0);
  });
});

describe('the virtual logger installing an offer', () => {
  test('when the offer is good, then it reports downloading → downloaded → installing → installed, reboots, and checks in at once on the new version', async () => {
    const image = randomBytes(12_345);
    const offer = makeRelease(image, '2.4.0', 5);
    const server = fakeServer({ image, offer });
    const { logger, setNow } = makeLogger(server, { interruptRate: 0.5, seed: 3 });
    const outcome = await logger.cycle(START);
    expect(outcome).toEqual({ state: 'installed' });
    expect(server.checkIns().map((b) => b.report?.state ?? null)).toEqual([null, 'downloading', 'downloaded', 'installing', 'installed']);
    expect(server.checkIns().every((b) => b.firmware === '2.3.1')).toBe(true);
    // The answer to "installed" still carries the offer (the logger has not rebooted yet): it must not install again.
    expect(logger.wants(offer)).toBe(false);
    // It reboots and checks in as soon as it is up, without waiting for the server's interval.
    expect(logger.nextCheckInAt.getTime()).toBeLessThan(START.getTime() + 60_000);
    setNow(logger.nextCheckInAt);
    await logger.cycle();
    const after = server.checkIns().at(-1)!;
    expect(after.firmware).toBe('2.4.0');
    expect(after.security_counter).toBe(5);
    expect(after.reset_reason).toBe('software');
    expect(after.report).toBeUndefined();
    expect(after.uptime_s).toBeLessThan(60);
  });

  test('when the server delivers a tampered image, then the logger rejects it, reports failed with reason integrity, and keeps its version', async () => {
    const image = randomBytes(8_000);
    const offer = makeRelease(image);
    const tampered = Buffer.from(image);
    tampered[4000] ^= 0xff;
    const server = fakeServer({ image: tampered, offer });
    const { logger, setNow } = makeLogger(server);
    const outcome = await logger.cycle(START);
    expect(outcome).toMatchObject({ state: 'failed', reason: 'integrity' });
    expect(server.checkIns().map((b) => b.report?.state ?? null)).toEqual([null, 'downloading', 'failed']);
    expect(server.checkIns().at(-1)!.report).toMatchObject({ release: RELEASE, state: 'failed', reason: 'integrity' });
    server.state.offer = null;
    setNow(new Date(START.getTime() + 900_000));
    await logger.cycle();
    expect(server.checkIns().at(-1)!.firmware).toBe('2.3.1');
  });

  test('when the manifest is not for the logger’s board, then it reports failed with reason unsupported before installing', async () => {
    const image = randomBytes(2_000);
    const offer = makeRelease(image);
    const server = fakeServer({ image, offer });
    const { logger } = makeLogger(server, { board: 'A' });
    expect(await logger.cycle(START)).toMatchObject({ state: 'failed', reason: 'unsupported' });
    expect(server.checkIns().map((b) => b.report?.state ?? null)).not.toContain('installing');
  });

  test('when every install is made to fail (--fail-rate 1), then each failure names integrity, storage or other', async () => {
    const image = randomBytes(2_000);
    const offer = makeRelease(image);
    const reasons = new Set<string>();
    for (let seed = 1; seed <= 30; seed++) {
      const server = fakeServer({ image, offer });
      const { logger } = makeLogger(server, { failRate: 1, seed });
      const outcome = await logger.cycle(START);
      expect(outcome?.state).toBe('failed');
      expect(server.checkIns().map((b) => b.report?.state ?? null)).toEqual([null, 'downloading', 'downloaded', 'installing', 'failed']);
      reasons.add(outcome!.reason!);
    }
    expect([...reasons].sort()).toEqual(['integrity', 'other', 'storage']);
  });
});
