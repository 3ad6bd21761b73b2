// An enrollment sent again (the phone lost its signal and cannot tell whether its first try arrived)
// is answered with the first answer, never enrolled twice. The rules checked here are those of the
// IETF HTTPAPI draft "The Idempotency-Key HTTP Header Field" (docs/SOURCES.md §17): a repeat of a
// non-idempotent POST (RFC 9110 §9.2.2) under the same key gets the first result; the same key with a
// different payload is refused with 422.
import crypto from 'node:crypto';
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { Activity, Logger, MeasurementProfile } from '../../server/db/models';
import { demoAgent, demoModelId, siteIdNamed } from './registry-helpers';

let t: TestApp;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
});
afterAll(() => t.close());

let serialNo = 1;
async function freshLogger() {
  const { agent } = await demoAgent(t, 'Morgan');
  const res = await agent.post('/api/loggers').set(csrf).send({ serial: `FL2-3${String(serialNo++).padStart(4, '0')}`, modelId: await demoModelId(), board: 'B' });
  if (res.status !== 201) throw new Error(`registration failed: ${JSON.stringify(res.body)}`);
  return { id: res.body.id as string, token: res.body.token as string, serial: res.body.serial as string };
}

// Power-monitor data sheet SBOS547 Table 1 (docs/SOURCES.md §8): 2 mΩ at a 1 mA LSB is CAL 2560.
const install = { panelWp: 400, panelVocV: 22.4, shuntOhm: 0.002, maxCurrentA: 32.768, tempResolutionBits: 12, notes: 'Leads fused at the combiner box' };

const enrolledRows = async (loggerId: string) => ({
  activity: await Activity.count({ where: { action: 'logger.enrolled', targetId: loggerId } }),
  profiles: await MeasurementProfile.count({ where: { loggerId } }),
});

test('when the same enrollment is sent twice, then one enrollment, one activity row, one profile, and the same answer', async () => {
  const logger = await freshLogger();
  const { agent } = await demoAgent(t, 'Tomasz');
  const body = { ...install, token: logger.token, siteId: await siteIdNamed('Aldmere Village Hall'), enrollmentId: crypto.randomUUID() };
  const first = await agent.post('/api/enrollments').set(csrf).send(body);
  expect(first.status).toBe(201);
  const again = await agent.post('/api/enrollments').set(csrf).send(body);
  expect(again.status).toBe(201);
  expect(again.body).toEqual(first.body);
  expect(first.body.profile).toMatchObject({ version: 1, calibration: 2560 });
  expect(await enrolledRows(logger.id)).toEqual({ activity: 1, profiles: 1 });
  expect((await Logger.findByPk(logger.id))!.status).toBe('enrolled');
});

test('when the label link is sent the second time instead of its token, then it is the same enrollment', async () => {
  const logger = await freshLogger();
  const { agent } = await demoAgent(t, 'Tomasz');
  const body = { ...install, token: logger.token, siteId: await siteIdNamed('Aldmere Village Hall'), enrollmentId: crypto.randomUUID() };
  const first = await agent.post('/api/enrollments').set(csrf).send(body);
  const again = await agent.post('/api/enrollments').set(csrf).send({ ...body, token: `https://console.fernhollow.example/enroll?t=${logger.token}` });
  expect([first.status, again.status]).toEqual([201, 201]);
  expect(again.body).toEqual(first.body);
  expect(await enrolledRows(logger.id)).toEqual({ activity: 1, profiles: 1 });
});

test('when two copies of an enrollment arrive at once, then the logger is enrolled once and both get its answer', async () => {
  const logger = await freshLogger();
  const { agent } = await demoAgent(t, 'Tomasz');
  const body = { ...install, token: logger.token, siteId: await siteIdNamed('Aldmere Village Hall'), enrollmentId: crypto.randomUUID() };
  const [a, b] = await Promise.all([agent.post('/api/enrollments').set(csrf).send(body), agent.post('/api/enrollments').set(csrf).send(body)]);
  expect([a.status, b.status]).toEqual([201, 201]);
  expect(b.body).toEqual(a.body);
  expect(await enrolledRows(logger.id)).toEqual({ activity: 1, profiles: 1 });
});

test('when the same enrollment id comes with different install details, then 422 names enrollmentId and nothing changes', async () => {
  const logger = await freshLogger();
  const { agent } = await demoAgent(t, 'Tomasz');
  const body = { ...install, token: logger.token, siteId: await siteIdNamed('Aldmere Village Hall'), enrollmentId: crypto.randomUUID() };
  expect((await agent.post('/api/enrollments').set(csrf).send(body)).status).toBe(201);
  const changed = await agent.post('/api/enrollments').set(csrf).send({ ...body, maxCurrentA: 15 });
  expect(changed.status).toBe(422);
  expect(changed.headers['content-type']).toMatch(/^application\/problem\+json/);
  expect(changed.body.errors.map((e: { path: string }) => e.path)).toEqual(['enrollmentId']);
  expect(await enrolledRows(logger.id)).toEqual({ activity: 1, profiles: 1 });
  expect((await agent.get(`/api/loggers/${logger.id}`)).body.profile.maxCurrentA).toBe(32.768);
});

test('when another person sends an enrollment id already used by someone else, then it is their own attempt: 409, already enrolled', async () => {
  const logger = await freshLogger();
  const tomasz = await demoAgent(t, 'Tomasz');
  const morgan = await demoAgent(t, 'Morgan');
  const body = { ...install, token: logger.token, siteId: await siteIdNamed('Aldmere Village Hall'), enrollmentId: crypto.randomUUID() };
  expect((await tomasz.agent.post('/api/enrollments').set(csrf).send(body)).status).toBe(201);
  const other = await morgan.agent.post('/api/enrollments').set(csrf).send(body);
  expect(other.status).toBe(409);
  expect(other.body.detail).toContain('already enrolled at Aldmere Village Hall');
  expect(await enrolledRows(logger.id)).toEqual({ activity: 1, profiles: 1 });
});

test('when a queued enrollment is refused (its label was issued again), then nothing is remembered and the reason comes back each time', async () => {
  const logger = await freshLogger();
  const admin = await demoAgent(t, 'Morgan');
  expect((await admin.agent.post(`/api/loggers/${logger.id}/token`).set(csrf)).status).toBe(200);
  const { agent } = await demoAgent(t, 'Tomasz');
  const body = { ...install, token: logger.token, siteId: await siteIdNamed('Aldmere Village Hall'), enrollmentId: crypto.randomUUID() };
  for (let i = 0; i < 2; i++) {
    const res = await agent.post('/api/enrollments').set(csrf).send(body);
    expect(res.status).toBe(404);
    expect(res.body.detail).toContain('This label is not known');
  }
  const [rows] = await t.sequelize.query('SELECT count(*)::int AS n FROM enrollment_requests WHERE enrollment_id = :id', { replacements: { id: body.enrollmentId } });
  expect(rows).toEqual([{ n: 0 }]);
  expect(await enrolledRows(logger.id)).toEqual({ activity: 0, profiles: 0 });
});

test('when an enrollment was answered, then the stored record holds a digest of the request and never the label token', async () => {
  const logger = await freshLogger();
  const { agent } = await demoAgent(t, 'Tomasz');
  const body = { ...install, token: logger.token, siteId: await siteIdNamed('Aldmere Village Hall'), enrollmentId: crypto.randomUUID() };
  expect((await agent.post('/api/enrollments').set(csrf).send(body)).status).toBe(201);
  const [rows] = await t.sequelize.query('SELECT request_digest, answer::text AS answer, logger_id FROM enrollment_requests WHERE enrollment_id = :id', {
    replacements: { id: body.enrollmentId },
  });
  const row = (rows as { request_digest: string; answer: string; logger_id: string }[])[0];
  expect(row.logger_id).toBe(logger.id);
  expect(row.request_digest).toMatch(/^[0-9a-f]{64}$/); // SHA-256, 256 bits as hex (FIPS 180-4, docs/SOURCES.md §3)
  expect(row.answer).not.toContain(logger.token);
  expect(row.request_digest).not.toContain(logger.token.slice(4));
});
