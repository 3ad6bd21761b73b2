// The first-readings check through the device API: a logger is enrolled, checks in with readings, and the
// console reads the verdict kept with the logger (server/loggers/commissioning.ts, lib/commissioning.ts).
import { QueryTypes } from 'sequelize';
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { Activity } from '../../server/db/models';
import { demoAgent, demoModelId, siteIdNamed } from './registry-helpers';

let t: TestApp;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
});
afterAll(() => t.close());

const SITE = 'Aldmere Village Hall';
let serialNo = 1;

// Power-monitor data sheet SBOS547, Table 1 (docs/SOURCES.md §8 [S]): 2 mΩ shunt, Current_LSB 1 mA (32.768 A / 2^15),
// Power_LSB 25 mW. Panel Voc 22.0 V with β −0.30 %/°C.
const install = { panelWp: 400, panelVocV: 22.0, vocTempCoeffPctPerC: -0.3, shuntOhm: 0.002, maxCurrentA: 32.768, tempResolutionBits: 12 };
// SBOS547 Table 1 [S]: bus 11.98 V, current 10 A, power 119.8 W; probe +25.0625 °C (temperature-probe data sheet Table 1, §9 [S]).
const good = { bus_v: 11.98, current_a: 10, power_w: 119.8, energy_wh: 3.2, temp_c: 25.0625 };

async function enrolled() {
  const morgan = await demoAgent(t, 'Morgan');
  const reg = await morgan.agent.post('/api/loggers').set(csrf).send({ serial: `FL2-C${String(serialNo++).padStart(4, '0')}`, modelId: await demoModelId(), board: 'B' });
  expect(reg.status).toBe(201);
  const tomasz = await demoAgent(t, 'Tomasz');
  const res = await tomasz.agent.post('/api/enrollments').set(csrf).send({ ...install, token: reg.body.token, siteId: await siteIdNamed(SITE) });
  expect(res.status).toBe(201);
  return { id: reg.body.id as string, token: reg.body.token as string, serial: reg.body.serial as string, tomasz: tomasz.agent };
}

const checkIn = (token: string, readings: Record<string, number> | undefined, configVersion?: number) =>
  t
    .request()
    .post('/api/device/v1/check-in')
    .set('Authorization', `Bearer ${token}`)
    .send({ firmware: '2.1.4', board: 'B', security_counter: 0, ...(readings ? { readings } : {}), ...(configVersion === undefined ? {} : { config_version: configVersion }) })
    .expect(200);

beforeAll(async () => {
  // The site's lowest expected temperature: −15 °C, so Voc,max = 22.0 × (1 + 0.003 × 40) = 24.64 V (docs/SOURCES.md §14 [D]).
  const morgan = await demoAgent(t, 'Morgan');
  const res = await morgan.agent.patch(`/api/sites/${await siteIdNamed(SITE)}`).set(csrf).send({ minTempC: -15 });
  expect(res.status).toBe(200);
});

test('when a logger is enrolled and checks in before it runs its profile, then the check waits: readings made before the calibration is written do not count (SBOS547: current and power read 0 until then)', async () => {
  const lg = await enrolled();
  await checkIn(lg.token, { bus_v: 11.98, current_a: 0, power_w: 0, temp_c: 85 }); // no config_version: the profile is not on the logger yet
  const res = await lg.tomasz.get(`/api/loggers/${lg.id}/commissioning`);
  expect(res.status).toBe(200);
  expect(res.body).toMatchObject({ state: 'waiting', readings: [], judgedAt: null, problem: null, can: { restart: true } });
  // While it waits, the figures are today's: Voc,max 24.64 V (§14 [D]), the profile's 1 mA and 25 mW steps (SBOS547 Table 1).
  expect(res.body.figures).toMatchObject({ vocMaxV: 24.64, currentLsbA: 0.001, powerLsbW: 0.025, busLsbV: 0.00125, profileVersion: 1, siteMinTempC: -15 });
  expect(res.body.verdict).toMatchObject({ state: 'waiting', counted: 0, needed: 3 });
});

test('when the shunt is wired the wrong way round, then the first reading under the profile gives a negative current and the check fails on it, kept with the logger', async () => {
  const lg = await enrolled();
  await checkIn(lg.token, undefined); // first contact: receives profile version 1
  await checkIn(lg.token, { ...good, current_a: -10, power_w: -119.8 }, 1);
  const res = await lg.tomasz.get(`/api/loggers/${lg.id}/commissioning`);
  expect(res.body.state).toBe('failed');
  expect(res.body.judgedAt).not.toBeNull();
  const failed = res.body.verdict.items.filter((i: { ok: boolean }) => !i.ok);
  expect(failed.map((i: { item: string }) => i.item)).toEqual(['current']);
  expect(failed[0].failures).toEqual([{ reading: 1, found: '−10 A', why: 'negative: the current flows backwards through the shunt' }]);
  expect(failed[0].lookAt).toMatch(/swap the two leads at the shunt/);
  // The figures it used are stored with the verdict.
  expect(res.body.figures).toMatchObject({ vocMaxV: 24.64, currentLsbA: 0.001, powerLsbW: 0.025 });
  const activity = await Activity.findOne({ where: { action: 'logger.commissioning_checked', targetId: lg.id } });
  expect(activity?.summary).toBe(`First readings of logger ${lg.serial}: commissioning check failed: Current direction`);

  // Later readings do not change a verdict once given.
  await checkIn(lg.token, good, 1);
  expect((await lg.tomasz.get(`/api/loggers/${lg.id}/commissioning`)).body).toMatchObject({ state: 'failed', readings: [expect.objectContaining({ currentA: -10 })] });

  // The installer swaps the leads and starts the check again: the next three good readings pass.
  const restarted = await lg.tomasz.post(`/api/loggers/${lg.id}/commissioning/restart`).set(csrf);
  expect(restarted.status).toBe(200);
  expect(restarted.body).toMatchObject({ state: 'waiting', readings: [], judgedAt: null });
  expect((await Activity.findOne({ where: { action: 'logger.commissioning_restarted', targetId: lg.id } }))?.summary).toBe(
    `First-readings check of logger ${lg.serial} started again; it had failed: Current direction`,
  );
  for (let i = 0; i < 3; i++) await checkIn(lg.token, good, 1);
  const passed = await lg.tomasz.get(`/api/loggers/${lg.id}/commissioning`);
  expect(passed.body).toMatchObject({ state: 'passed', verdict: { state: 'passed', counted: 3 } });
  expect(passed.body.readings).toHaveLength(3);
  expect(passed.body.readings[0]).toMatchObject({ busV: 11.98, currentA: 10, powerW: 119.8, tempC: 25.0625 });
});

test('when three good readings arrive under the profile, then "passed"; a fourth bad one changes nothing', async () => {
  const lg = await enrolled();
  await checkIn(lg.token, good, 1);
  await checkIn(lg.token, good, 1);
  expect((await lg.tomasz.get(`/api/loggers/${lg.id}/commissioning`)).body).toMatchObject({ state: 'waiting', verdict: { counted: 2 } });
  await checkIn(lg.token, good, 1);
  await checkIn(lg.token, { ...good, temp_c: 85 }, 1); // the probe's power-on value (§9) after the verdict
  const res = await lg.tomasz.get(`/api/loggers/${lg.id}/commissioning`);
  expect(res.body.state).toBe('passed');
  expect(res.body.readings).toHaveLength(3);
  const [{ n }] = await t.sequelize.query<{ n: number }>('SELECT jsonb_array_length(readings)::int AS n FROM commissioning_checks WHERE logger_id = :id', {
    type: QueryTypes.SELECT,
    replacements: { id: lg.id },
  });
  expect(n).toBe(3);
});

test('when the profile changes before the verdict, then the readings start over under the new version', async () => {
  const lg = await enrolled();
  await checkIn(lg.token, good, 1);
  const changed = await lg.tomasz.patch(`/api/loggers/${lg.id}/profile`).set(csrf).send({ shuntOhm: 0.004, maxCurrentA: 16.384, tempResolutionBits: 12 });
  expect(changed.status).toBe(200);
  // Version 1 readings no longer count, and the logger still on version 1 adds none.
  await checkIn(lg.token, good, 1);
  expect((await lg.tomasz.get(`/api/loggers/${lg.id}/commissioning`)).body).toMatchObject({ state: 'waiting', readings: [], figures: { profileVersion: 2 } });
  // SBOS547 Eq. 2: 16.384 A / 2^15 = 500 µA; Power_LSB = 25 × 500 µA = 12.5 mW.
  await checkIn(lg.token, good, 2);
  const res = await lg.tomasz.get(`/api/loggers/${lg.id}/commissioning`);
  expect(res.body).toMatchObject({ state: 'waiting', figures: { profileVersion: 2, currentLsbA: 0.0005, powerLsbW: 0.0125 } });
  expect(res.body.readings).toHaveLength(1);
});

test('when support asks to start the check again, then 403; an unknown logger is 404; a logger not enrolled says why it waits', async () => {
  const lg = await enrolled();
  const lena = await demoAgent(t, 'Lena');
  expect((await lena.agent.get(`/api/loggers/${lg.id}/commissioning`)).body.can).toEqual({ restart: false });
  const refused = await lena.agent.post(`/api/loggers/${lg.id}/commissioning/restart`).set(csrf);
  expect(refused.status).toBe(403);
  expect(refused.headers['content-type']).toMatch(/application\/problem\+json/);
  const missing = await lg.tomasz.get('/api/loggers/00000000-0000-4000-8000-000000000000/commissioning');
  expect(missing.status).toBe(404);

  const morgan = await demoAgent(t, 'Morgan');
  const reg = await morgan.agent.post('/api/loggers').set(csrf).send({ serial: 'FL2-C9999', modelId: await demoModelId(), board: 'B' });
  const waiting = await morgan.agent.get(`/api/loggers/${reg.body.id}/commissioning`);
  expect(waiting.body).toMatchObject({ state: 'waiting', problem: expect.stringMatching(/not enrolled/) });
  expect((await morgan.agent.post(`/api/loggers/${reg.body.id}/commissioning/restart`).set(csrf)).status).toBe(409);
});

test('when a logger was enrolled before the check was kept, then its readings are not counted until a person starts the check', async () => {
  const lg = await enrolled();
  // As a logger enrolled before migration 0020 is: enrolled, with a profile, and no check row.
  await t.sequelize.query('DELETE FROM commissioning_checks WHERE logger_id = :id', { replacements: { id: lg.id } });

  await checkIn(lg.token, good, 1);
  const before = await lg.tomasz.get(`/api/loggers/${lg.id}/commissioning`);
  expect(before.body).toMatchObject({ state: 'waiting', startedAt: null, readings: [], problem: expect.stringMatching(/^No first-readings check was kept/) });
  const [{ n }] = await t.sequelize.query<{ n: number }>('SELECT count(*)::int AS n FROM commissioning_checks WHERE logger_id = :id', {
    type: QueryTypes.SELECT,
    replacements: { id: lg.id },
  });
  expect(n).toBe(0);

  const started = await lg.tomasz.post(`/api/loggers/${lg.id}/commissioning/restart`).set(csrf);
  expect(started.status).toBe(200);
  expect(started.body).toMatchObject({ state: 'waiting', readings: [], problem: null });
  expect(started.body.startedAt).not.toBeNull();
  expect((await Activity.findOne({ where: { action: 'logger.commissioning_restarted', targetId: lg.id } }))?.summary).toBe(`First-readings check of logger ${lg.serial} started`);
  await checkIn(lg.token, good, 1);
  expect((await lg.tomasz.get(`/api/loggers/${lg.id}/commissioning`)).body.readings).toHaveLength(1);
});
