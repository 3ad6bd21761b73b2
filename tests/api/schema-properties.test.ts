// Property-based tests of the device and console request schemas at their routes, with fast-check
// (docs/SOURCES.md §19: fast-check's documentation, "Properties" and "Arbitraries" — an arbitrary
// describes every value a generator may produce, `fc.assert(fc.asyncProperty(…))` runs the property on
// many of them and shrinks a failure to a smallest counterexample, and a fixed seed replays the run).
//
// Properties:
// 1. Whatever JSON body (or text that is not JSON) reaches a route — arbitrary values, objects made of
//    the schema's own field names with arbitrary values, or a valid body with one field replaced by an
//    arbitrary value — the answer is never a 5xx: either 2xx, or a 4xx in problem+json (RFC 9457 §3;
//    RFC 9110 §15.5: a request the server will not process is a 4xx, §15.6: 5xx is the server failing).
// 2. A check-in generated within the device contract (DEVICE_API.md's table: strict semver.org 2.0.0
//    firmware, counts ≥ 0, RSSI −120…0 dBm, supply 0…60 V, the reset reasons, the install states and
//    failure reasons) is accepted: 200 with an answer the reference client's own schema reads.
import crypto from 'node:crypto';
import fc from 'fast-check';
import type { Response } from 'supertest';
import { csrf, startTestApp, type TestApp } from '../helpers/app';
import { readBenchSheet } from '../../scripts/simulator/fleet';
import { checkInResponseSchema } from '../../scripts/simulator/logger';
import { canonicalManifest, signManifest } from '../../server/images/manifest';
import { checkInRequestSchema } from '../../schemas/device';
import { enrollmentLookupRequest, enrollRequest, registerLoggerRequest, moveLoggerRequest } from '../../schemas/loggers';
import { createSiteRequest, updateSiteRequest } from '../../schemas/sites';
import { createModelRequest, updateModelRequest } from '../../schemas/models';
import { patchReleaseRequest, transitionRequest } from '../../schemas/releases';
import { registerKeyRequest } from '../../schemas/keys';
import { createTokenRequest } from '../../schemas/tokens';
import { signInRequest } from '../../schemas/auth';
import { FAILURE_REASONS, REPORTED_INSTALL_STATES, RESET_REASONS } from '../../schemas/words';
import fs from 'node:fs';
import path from 'node:path';

// A fixed seed, so a failure is replayed exactly (fast-check docs, "Replay").
const SEED = 20261202;
const RUNS = 25;

let t: TestApp;
let admin: ReturnType<TestApp['agent']>;
let engineer: ReturnType<TestApp['agent']>;
let token: string;
const ids = { site: '', model: '', logger: '', release: '' };

beforeAll(async () => {
  // The device rate limit is lifted so the property's many check-ins from one logger are judged on
  // their bodies, not on their number (the limit has tests of its own).
  t = await startTestApp({ seed: 'demo', config: { deviceRatePerMinute: 1_000_000 } });
  admin = await t.signedIn('admin');
  engineer = await t.signedIn('release_engineer');
  const bench = readBenchSheet(fs.readFileSync(path.join(t.dataDir, 'demo', 'bench-sheet.csv'), 'utf8'));
  token = bench[0].token;
  ids.site = (await admin.get('/api/sites')).body.rows[0].id;
  ids.model = (await admin.get('/api/models')).body.rows[0].id;
  ids.logger = (await admin.get('/api/loggers')).body.rows[0].id;
  // A draft release to PATCH and move: a signed 2.3.0 for board B.
  const pair = crypto.generateKeyPairSync('ed25519');
  const publicKeyPem = String(pair.publicKey.export({ type: 'spki', format: 'pem' }));
  expect((await admin.post('/api/keys').set(csrf).send({ name: 'Property key', publicKeyPem })).status).toBe(201);
  const image = crypto.randomBytes(4096);
  const manifest = canonicalManifest({
    board_revisions: ['B'], format: 1, image_sha256: crypto.createHash('sha256').update(image).digest('hex'), image_size: image.length,
    issued_at: '2026-06-20T10:00:00Z', model: ids.model, security_counter: 1, version: '2.3.0',
  });
  const upload = await engineer
    .post('/api/releases')
    .set(csrf)
    .attach('image', image, { filename: 'fl2.bin', contentType: 'application/octet-stream' })
    .attach('manifest', Buffer.from(manifest), { filename: 'manifest.json', contentType: 'application/json' })
    .field('signature', signManifest(manifest, String(pair.privateKey.export({ type: 'pkcs8', format: 'pem' }))));
  expect(upload.status).toBe(201);
  ids.release = upload.body.id;
}, 120_000);

afterAll(() => t?.close());

/** The field names of an object schema (zod's `shape`), so generated objects use the route's own words. */
function fieldsOf(schema: unknown): string[] {
  const shape = (schema as { shape?: Record<string, unknown> }).shape;
  return shape ? Object.keys(shape) : [];
}

type Body = { json: unknown } | { text: string };

/**
 * Bodies for a route: any JSON value (every kind of string, deep nesting), objects of the schema's
 * field names with any values, a valid body with one field replaced by any value, and text that is
 * not JSON (fast-check docs, "Combiners": fc.oneof, fc.dictionary, fc.record).
 */
function bodies(schema: unknown, valid: Record<string, unknown>): fc.Arbitrary<Body> {
  const anyJson = fc.oneof(fc.jsonValue({ stringUnit: 'grapheme', maxDepth: 4 }), fc.jsonValue({ stringUnit: 'binary', maxDepth: 4 }), fc.jsonValue({ maxDepth: 4 }));
  const value = fc.oneof(anyJson, fc.string({ unit: 'binary' }), fc.double(), fc.integer(), fc.constant(null), fc.constant(Number.MAX_SAFE_INTEGER), fc.constant(2 ** 31), fc.constant(-1));
  const fields = [...new Set([...fieldsOf(schema), ...Object.keys(valid)])];
  const ofFields = fc.dictionary(fc.constantFrom(...fields), value, { maxKeys: fields.length });
  const mutated = fc.tuple(fc.constantFrom(...Object.keys(valid)), value).map(([k, v]) => ({ ...valid, [k]: v }));
  const text = fc.string({ unit: 'binary', maxLength: 200 }).filter((s) => {
    try {
      JSON.parse(s);
      return false;
    } catch {
      return true;
    }
  });
  return fc.oneof(
    anyJson.map((json) => ({ json })),
    ofFields.map((json) => ({ json })),
    mutated.map((json) => ({ json })),
    text.map((text) => ({ text })),
  );
}

/** 2xx, or a 4xx in problem+json; never a 5xx (RFC 9110 §15.5, §15.6; RFC 9457 §3). */
function expectNoServerFailure(res: Response, route: string, body: Body) {
  const what = `${route} with ${JSON.stringify(body).slice(0, 300)} → ${res.status} ${JSON.stringify(res.body).slice(0, 300)}`;
  if (res.status >= 500) throw new Error(`5xx: ${what}`);
  if (res.status >= 400) {
    if (!/^application\/problem\+json/.test(String(res.headers['content-type']))) throw new Error(`4xx without problem+json: ${what}`);
  } else if (res.status < 200 || res.status > 299) {
    throw new Error(`neither 2xx nor 4xx: ${what}`);
  }
}

type Route = { method: 'post' | 'patch'; path: () => string; who: 'device' | 'admin' | 'engineer' | 'nobody'; schema: unknown; valid: () => Record<string, unknown> };

const validCheckIn = () => ({ firmware: '2.2.0', board: 'B', security_counter: 0, uptime_s: 3600, reset_reason: 'power_on', resets_since_last: 0, rssi_dbm: -70, free_heap_b: 150000, supply_v: 5.1, readings: { bus_v: 18.2, current_a: 1.1, power_w: 20, energy_wh: 3, temp_c: 21 }, config_version: 0 });

const routes: Record<string, Route> = {
  'POST /api/device/v1/check-in': { method: 'post', path: () => '/api/device/v1/check-in', who: 'device', schema: checkInRequestSchema, valid: validCheckIn },
  'POST /api/device/v1/check-in (install report)': {
    method: 'post', path: () => '/api/device/v1/check-in', who: 'device', schema: checkInRequestSchema,
    valid: () => ({ ...validCheckIn(), report: { release: ids.release, state: 'failed', reason: 'storage', detail: 'writing the update slot failed' } }),
  },
  'POST /api/enrollments/lookup': { method: 'post', path: () => '/api/enrollments/lookup', who: 'admin', schema: enrollmentLookupRequest, valid: () => ({ token }) },
  'POST /api/enrollments': {
    method: 'post', path: () => '/api/enrollments', who: 'admin', schema: enrollRequest,
    valid: () => ({ token, siteId: ids.site, panelWp: 100, panelVocV: 22.5, shuntOhm: 0.01, maxCurrentA: 8, tempResolutionBits: 12, notes: 'Roof of the dairy' }),
  },
  'POST /api/loggers': { method: 'post', path: () => '/api/loggers', who: 'admin', schema: registerLoggerRequest, valid: () => ({ serial: `FL2-P${crypto.randomInt(1e6)}`, modelId: ids.model, board: 'B', channel: 'stable' }) },
  'POST /api/loggers/:id/move': { method: 'post', path: () => `/api/loggers/${ids.logger}/move`, who: 'admin', schema: moveLoggerRequest, valid: () => ({ siteId: ids.site }) },
  'POST /api/sites': { method: 'post', path: () => '/api/sites', who: 'admin', schema: createSiteRequest, valid: () => ({ name: `Aldmere Barn ${crypto.randomInt(1e6)}`, latitude: 52.14, longitude: -1.98 }) },
  'PATCH /api/sites/:id': { method: 'patch', path: () => `/api/sites/${ids.site}`, who: 'admin', schema: updateSiteRequest, valid: () => ({ name: 'Aldmere Village Hall' }) },
  'POST /api/models': {
    method: 'post', path: () => '/api/models', who: 'admin', schema: createModelRequest,
    valid: () => ({ name: `FL-9 ${crypto.randomInt(1e6)}`, boards: [{ label: 'A' }], checkInIntervalS: 900, minSupplyV: 4.5 }),
  },
  'PATCH /api/models/:id': { method: 'patch', path: () => `/api/models/${ids.model}`, who: 'admin', schema: updateModelRequest, valid: () => ({ checkInIntervalS: 900 }) },
  'POST /api/releases': { method: 'post', path: () => '/api/releases', who: 'engineer', schema: {}, valid: () => ({ signature: 'AAAA' }) },
  'PATCH /api/releases/:id': { method: 'patch', path: () => `/api/releases/${ids.release}`, who: 'engineer', schema: patchReleaseRequest, valid: () => ({ boards: ['B'], upgradeFrom: '>=2.1.0', daylightWindow: false, tripFailureRatio: 0.1 }) },
  'POST /api/releases/:id/transitions': { method: 'post', path: () => `/api/releases/${ids.release}/transitions`, who: 'engineer', schema: transitionRequest, valid: () => ({ action: 'pause' }) },
  'POST /api/keys': { method: 'post', path: () => '/api/keys', who: 'admin', schema: registerKeyRequest, valid: () => ({ name: 'Spare key', publicKeyPem: '-----BEGIN PUBLIC KEY-----\nAAAA\n-----END PUBLIC KEY-----\n' }) },
  'POST /api/tokens': { method: 'post', path: () => '/api/tokens', who: 'admin', schema: createTokenRequest, valid: () => ({ name: 'CI pipeline', scopes: ['releases:read'] }) },
  'POST /api/auth/sign-in': { method: 'post', path: () => '/api/auth/sign-in', who: 'nobody', schema: signInRequest, valid: () => ({ email: 'lena@fernhollow.example', password: 'not her password' }) },
};

async function send(route: Route, body: Body): Promise<Response> {
  const agent = route.who === 'admin' ? admin : route.who === 'engineer' ? engineer : t.request();
  let req = agent[route.method](route.path()).set(csrf).set('Content-Type', 'application/json');
  if (route.who === 'device') req = req.set('Authorization', `Bearer ${token}`);
  return req.send('json' in body ? JSON.stringify(body.json) : body.text);
}

describe('request schemas under arbitrary bodies (fast-check)', () => {
  test.each(Object.keys(routes))('when %s receives arbitrary JSON bodies, then each answer is 2xx or a problem+json 4xx, never a 5xx', async (name) => {
    const route = routes[name];
    await fc.assert(
      fc.asyncProperty(bodies(route.schema, route.valid()), async (body) => {
        expectNoServerFailure(await send(route, body), name, body);
      }),
      { seed: SEED, numRuns: RUNS },
    );
  });
});

// ─── Valid check-ins are accepted ───────────────────────────────────────────

/** A version in the strict semver.org 2.0.0 grammar (§2, §9, §10): no leading zeros, optional pre-release and build. */
const semverArb = fc
  .tuple(fc.nat(999), fc.nat(999), fc.nat(999), fc.option(fc.constantFrom('rc.1', 'beta.2', 'alpha', '0.3.7', 'x-y-z'), { nil: undefined }), fc.option(fc.constantFrom('build.5', '20261202', 'sha.5114f85'), { nil: undefined }))
  .map(([a, b, c, pre, build]) => `${a}.${b}.${c}${pre ? `-${pre}` : ''}${build ? `+${build}` : ''}`);

const finite = (min: number, max: number) => fc.double({ min, max, noNaN: true, noDefaultInfinity: true });
const opt = <T>(arb: fc.Arbitrary<T>) => fc.option(arb, { nil: undefined });
/** Counts within what a 32-bit firmware counter holds. */
const count = fc.nat(2 ** 31 - 1);

/** A check-in within the contract (DEVICE_API.md, check-in request table), optional fields left out at random. */
const validCheckInArb = fc.record(
  {
    firmware: semverArb,
    board: fc.oneof(fc.constantFrom('A', 'B', 'C'), fc.string({ minLength: 1, maxLength: 32, unit: 'grapheme-ascii' }).filter((s) => s.trim().length > 0)),
    security_counter: count,
    uptime_s: opt(count),
    reset_reason: opt(fc.constantFrom(...RESET_REASONS)),
    resets_since_last: opt(fc.nat(1000)),
    reset_counts: opt(fc.dictionary(fc.constantFrom(...RESET_REASONS), fc.nat(1000))),
    rssi_dbm: opt(fc.integer({ min: -120, max: 0 })),
    free_heap_b: opt(count),
    supply_v: opt(finite(0, 60)),
    readings: opt(fc.record({ bus_v: finite(0, 100), current_a: finite(-20, 20), power_w: finite(0, 2000), energy_wh: finite(0, 1e6), temp_c: finite(-40, 125) }, { requiredKeys: [] })),
    config_version: opt(count),
    report: opt(
      fc.record(
        {
          release: fc.oneof(fc.uuid(), fc.constant('__release__')),
          state: fc.constantFrom(...REPORTED_INSTALL_STATES),
          reason: opt(fc.constantFrom(...FAILURE_REASONS)),
          detail: opt(fc.string({ maxLength: 200, unit: 'grapheme-ascii' })),
        },
        { requiredKeys: ['release', 'state'] },
      ),
    ),
  },
  { requiredKeys: ['firmware', 'board', 'security_counter'] },
);

describe('valid check-ins (fast-check)', () => {
  test('when a logger sends check-ins generated within the device contract, then each is accepted with 200 and an answer the reference client reads, or its report on a release never offered is refused with a 409 problem', async () => {
    await fc.assert(
      fc.asyncProperty(validCheckInArb, async (generated) => {
        const body = JSON.parse(JSON.stringify(generated)) as Record<string, unknown>; // optional fields left out, as a logger would
        const report = body.report as { release: string } | undefined;
        if (report?.release === '__release__') report.release = ids.release;
        expect(checkInRequestSchema.safeParse(body).success).toBe(true);
        const res = await t.request().post('/api/device/v1/check-in').set('Authorization', `Bearer ${token}`).send(body);
        // An install report counts only for a release offered to this logger or the one it runs
        // (DEVICE_API.md, install reports); any other is refused whole with a 409 problem.
        if (report && res.status === 409) {
          expect(res.headers['content-type']).toMatch(/^application\/problem\+json/);
          return;
        }
        if (res.status !== 200) throw new Error(`${res.status} for ${JSON.stringify(body)}: ${JSON.stringify(res.body)}`);
        expect(checkInResponseSchema.safeParse(res.body).success).toBe(true);
      }),
      { seed: SEED, numRuns: 50 },
    );
  });
});
