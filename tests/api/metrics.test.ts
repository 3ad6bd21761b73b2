// GET /metrics: the Prometheus text exposition format for an admin or an API token with the
// metrics:read scope, and for nobody else. The answer is read with a parser written here from the
// Prometheus documentation "Exposition formats" (text format 0.0.4: `# HELP` / `# TYPE` lines, then
// `name{label="value",…} value` samples; a histogram has `_bucket{le=…}` samples ending at le="+Inf",
// which equals its `_count`).
import { QueryTypes } from 'sequelize';
import { csrf } from '../helpers/app';
import { bearer, CHECK_IN, checkInBody, fleetApp } from './device-fixtures';

const app = fleetApp({ seed: 'demo' });

type Sample = { name: string; labels: Record<string, string>; value: number };

/** The text format's samples and declared types (Prometheus "Exposition formats", text-based format). */
function parseExposition(text: string) {
  const types = new Map<string, string>();
  const samples: Sample[] = [];
  for (const line of text.split('\n')) {
    if (line === '') continue;
    const type = /^# TYPE ([a-zA-Z_:][a-zA-Z0-9_:]*) (counter|gauge|histogram|summary|untyped)$/.exec(line);
    if (type) {
      types.set(type[1], type[2]);
      continue;
    }
    if (line.startsWith('#')) continue;
    const m = /^([a-zA-Z_:][a-zA-Z0-9_:]*)(?:\{(.*)\})? (\S+)(?: \d+)?$/.exec(line);
    if (!m) throw new Error(`not a sample line of the text format: ${line}`);
    const labels: Record<string, string> = {};
    for (const pair of (m[2] ?? '').matchAll(/([a-zA-Z_][a-zA-Z0-9_]*)="((?:[^"\\]|\\.)*)"/g)) labels[pair[1]] = pair[2].replace(/\\(.)/g, (_x, c: string) => (c === 'n' ? '\n' : c));
    const value = m[3] === '+Inf' ? Infinity : m[3] === '-Inf' ? -Infinity : Number(m[3]);
    if (Number.isNaN(value) && m[3] !== 'NaN') throw new Error(`not a sample value: ${line}`);
    samples.push({ name: m[1], labels, value });
  }
  const find = (name: string, labels: Record<string, string> = {}) =>
    samples.filter((s) => s.name === name && Object.entries(labels).every(([k, v]) => s.labels[k] === v));
  const value = (name: string, labels: Record<string, string> = {}) => {
    const found = find(name, labels);
    if (found.length !== 1) throw new Error(`${found.length} samples of ${name} ${JSON.stringify(labels)}`);
    return found[0].value;
  };
  return { types, samples, find, value };
}

async function scrape() {
  const admin = await app.t.signedIn('admin', 'Metrics Admin');
  const res = await admin.get('/metrics');
  expect(res.status).toBe(200);
  expect(res.headers['content-type']).toMatch(/^text\/plain; version=0\.0\.4/);
  return parseExposition(res.text);
}

describe('who may read /metrics', () => {
  test('when nobody is signed in, then 401; when support, an integrator or a release engineer asks, then 403', async () => {
    expect((await app.t.request().get('/metrics')).status).toBe(401);
    for (const role of ['support', 'integrator', 'release_engineer'] as const) {
      expect((await (await app.t.signedIn(role)).get('/metrics')).status).toBe(403);
    }
  });

  test('when an API token has metrics:read, then 200; with only fleet:read, then 403', async () => {
    const admin = await app.t.signedIn('admin', 'Metrics Admin');
    const token = async (scopes: string[]) => {
      const res = await admin.post('/api/tokens').set(csrf).send({ name: `scraper ${scopes.join(' ')}`, scopes, expiresAt: '2099-01-01T00:00:00Z' });
      expect(res.status).toBe(201);
      return res.body.token as string;
    };
    const scraper = await token(['metrics:read']);
    const reader = await token(['fleet:read']);
    const ok = await app.t.request().get('/metrics').set('Authorization', `Bearer ${scraper}`);
    expect(ok.status).toBe(200);
    expect(ok.text).toContain('# TYPE heliodor_http_request_duration_seconds histogram');
    expect((await app.t.request().get('/metrics').set('Authorization', `Bearer ${reader}`)).status).toBe(403);
    // The scope is not a key to the rest of the API.
    expect((await app.t.request().get('/api/loggers').set('Authorization', `Bearer ${scraper}`)).status).toBe(403);
  });
});

describe('what /metrics holds', () => {
  test('when the process is scraped, then Node\'s process metrics are there with their declared types', async () => {
    const m = await scrape();
    expect(m.types.get('process_cpu_user_seconds_total')).toBe('counter');
    expect(m.types.get('process_resident_memory_bytes')).toBe('gauge');
    expect(m.types.get('nodejs_eventloop_lag_seconds')).toBe('gauge');
    expect(m.value('process_resident_memory_bytes')).toBeGreaterThan(0);
  });

  test('when the fleet table is read, then the latency histogram counts it under its route pattern, and +Inf equals the count', async () => {
    const support = await app.t.signedIn('support');
    const before = (await scrape()).find('heliodor_http_request_duration_seconds_count', { route: '/api/loggers', method: 'GET', status: '200' })[0]?.value ?? 0;
    expect((await support.get('/api/loggers')).status).toBe(200);
    expect((await support.get('/api/loggers')).status).toBe(200);
    const m = await scrape();
    const labels = { route: '/api/loggers', method: 'GET', status: '200' };
    expect(m.value('heliodor_http_request_duration_seconds_count', labels)).toBe(before + 2);
    expect(m.value('heliodor_http_request_duration_seconds_bucket', { ...labels, le: '+Inf' })).toBe(before + 2);
    // Buckets are cumulative: never fewer at a larger bound.
    const buckets = m.find('heliodor_http_request_duration_seconds_bucket', labels).sort((a, b) => Number(a.labels.le) - Number(b.labels.le));
    for (let i = 1; i < buckets.length; i++) expect(buckets[i].value).toBeGreaterThanOrEqual(buckets[i - 1].value);
    // A logger's own page is one route pattern, not one series per logger.
    const anyId = (await support.get('/api/loggers')).body.rows[0].id;
    await support.get(`/api/loggers/${anyId}`);
    expect((await scrape()).find('heliodor_http_request_duration_seconds_count', { route: '/api/loggers/:id' })).toHaveLength(1);
  });

  test('when loggers check in, one with an offer and one with an unknown token, then check-ins count by status and the offer and reports by state come from the database', async () => {
    const before = await scrape();
    const ok0 = before.find('heliodor_device_check_ins_total', { status: '200' })[0]?.value ?? 0;
    const refused0 = before.find('heliodor_device_check_ins_total', { status: '401' })[0]?.value ?? 0;
    const offers0 = before.value('heliodor_offers');
    const offered0 = before.value('heliodor_install_reports', { state: 'offered' });

    const release = await app.fleet.release({ version: '3.0.0' });
    const lg = await app.fleet.logger({ board: 'C' });
    const res = await app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('2.9.0', { board: 'C' }));
    expect(res.status).toBe(200);
    expect(res.body.offer?.release).toBe(release.id);
    expect((await app.t.request().post(CHECK_IN).set(bearer('hlt_not-a-token-of-this-fleet-at-all-000000')).send(checkInBody('2.9.0'))).status).toBe(401);

    const after = await scrape();
    expect(after.value('heliodor_device_check_ins_total', { status: '200' })).toBe(ok0 + 1);
    expect(after.value('heliodor_device_check_ins_total', { status: '401' })).toBe(refused0 + 1);
    expect(after.value('heliodor_offers')).toBe(offers0 + 1);
    expect(after.value('heliodor_install_reports', { state: 'offered' })).toBe(offered0 + 1);
    const [{ n }] = await app.t.sequelize.query<{ n: number }>(`SELECT count(*)::int AS n FROM install_reports WHERE state = 'installed'`, { type: QueryTypes.SELECT });
    expect(after.value('heliodor_install_reports', { state: 'installed' })).toBe(n);
    expect(after.value('heliodor_database_up')).toBe(1);
  });

  test('when a release trips, then the trips figure counts it from the release history', async () => {
    const before = (await scrape()).value('heliodor_trips');
    const release = await app.fleet.release({ version: '3.1.0' });
    await app.t.sequelize.query(
      `INSERT INTO release_transitions (release_id, at, action, from_state, to_state, share, reason, actor_type, actor_name)
       VALUES (:id, now(), 'stop', 'complete', 'stopped', 100, 'failure ratio above the trip point', 'system', 'system')`,
      { replacements: { id: release.id } },
    );
    const m = await scrape();
    expect(m.value('heliodor_trips')).toBe(before + 1);
    expect(m.types.get('heliodor_db_pool_wait_seconds')).toBe('histogram');
    expect(m.value('heliodor_db_pool_wait_seconds_count')).toBeGreaterThan(0);
    expect(m.find('heliodor_db_pool_connections', { state: 'waiting' })).toHaveLength(1);
  });
});
