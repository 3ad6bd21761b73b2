// Enrollment on site: label lookup, enrollment with the measurement profile, refusals that name
// the limit, moving, profile versions, the install photo.
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { Activity, Logger, MeasurementProfile } from '../../server/db/models';
import { demoAgent, demoModelId, siteIdNamed } from './registry-helpers';

let t: TestApp;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
});
afterAll(() => t.close());

let serialNo = 1;
/** Registers a fresh logger as the admin and returns its id and token (the label's secret). */
async function freshLogger(modelId?: string, board = 'B') {
  const { agent } = await demoAgent(t, 'Morgan');
  const res = await agent.post('/api/loggers').set(csrf).send({ serial: `FL2-2${String(serialNo++).padStart(4, '0')}`, modelId: modelId ?? (await demoModelId()), board });
  if (res.status !== 201) throw new Error(`registration failed: ${JSON.stringify(res.body)}`);
  return { id: res.body.id as string, token: res.body.token as string, serial: res.body.serial as string };
}

// INA226 data sheet SBOS547, Table 1 worked example (docs/SOURCES.md §8): R_SHUNT = 2 mΩ with Current_LSB = 1 mA
// gives CAL = 0.00512 / (0.001 × 0.002) = 2560 (A00h) and Power_LSB = 25 × 1 mA = 25 mW. A maximum expected
// current of 32.768 A makes Eq. 2 (max / 2^15) land exactly on that 1 mA LSB.
const tableOneInstall = { panelWp: 400, panelVocV: 22.4, shuntOhm: 0.002, maxCurrentA: 32.768, tempResolutionBits: 12, notes: 'Leads fused at the combiner box' };

describe('label lookup', () => {
  test('when an integrator looks up a new label, then the logger and its model\'s measurement limits come back', async () => {
    const logger = await freshLogger();
    const { agent } = await demoAgent(t, 'Tomasz');
    const res = await agent.post('/api/enrollments/lookup').set(csrf).send({ token: logger.token });
    expect(res.status).toBe(200);
    expect(res.body).toEqual({
      logger: { id: logger.id, serial: logger.serial, modelId: await demoModelId(), modelName: 'FL-2 field logger', board: 'B', status: 'registered', site: null },
      // The demo model's limits are the chip's: 36 V bus, 81.92 mV shunt full scale (INA226 data sheet SBOS547); probe 9–12 bits (DS18B20 data sheet).
      limits: { busVMax: 36, shuntFullScaleV: 0.08192, tempResolutions: [9, 10, 11, 12] },
    });
  });

  test('when the whole label link is pasted instead of the token, then it is read the same way', async () => {
    const logger = await freshLogger();
    const { agent } = await demoAgent(t, 'Tomasz');
    const res = await agent.post('/api/enrollments/lookup').set(csrf).send({ token: `https://console.fernhollow.example/enroll?t=${logger.token}` });
    expect(res.status).toBe(200);
    expect(res.body.logger.id).toBe(logger.id);
  });

  test('when the token was rotated away or never issued, then 404 with the clear message', async () => {
    const logger = await freshLogger();
    const admin = await demoAgent(t, 'Morgan');
    await admin.agent.post(`/api/loggers/${logger.id}/token`).set(csrf);
    const { agent } = await demoAgent(t, 'Tomasz');
    for (const token of [logger.token, `hlt_${'A'.repeat(43)}`]) {
      const res = await agent.post('/api/enrollments/lookup').set(csrf).send({ token });
      expect(res.status).toBe(404);
      expect(res.body.detail).toBe('This label is not known: its token may have been rotated or the logger retired. Ask an admin for a new label.');
    }
  });

  test('when the logger was retired, then lookup and enrollment are 409', async () => {
    const logger = await freshLogger();
    const admin = await demoAgent(t, 'Morgan');
    await admin.agent.post(`/api/loggers/${logger.id}/retire`).set(csrf).send({});
    const res = await admin.agent.post('/api/enrollments/lookup').set(csrf).send({ token: logger.token });
    expect(res.status).toBe(409);
    expect(res.body.detail).toContain('retired');
    const enroll = await admin.agent.post('/api/enrollments').set(csrf).send({ ...tableOneInstall, token: logger.token, siteId: await siteIdNamed('Hollins Dairy') });
    expect(enroll.status).toBe(409);
  });

  test('when the text is not a token at all, then 400 names the field', async () => {
    const { agent } = await demoAgent(t, 'Tomasz');
    const res = await agent.post('/api/enrollments/lookup').set(csrf).send({ token: 'FL2-02401' });
    expect(res.status).toBe(400);
    expect(res.body.errors.map((e: { path: string }) => e.path)).toEqual(['token']);
  });

  test('when support looks up a label, then 403', async () => {
    const logger = await freshLogger();
    const { agent } = await demoAgent(t, 'Lena');
    expect((await agent.post('/api/enrollments/lookup').set(csrf).send({ token: logger.token })).status).toBe(403);
  });
});

describe('enrollment', () => {
  test('when an integrator enrolls at an assigned site, then 201 binds the logger and the profile follows the datasheet equations (Table 1 values)', async () => {
    const logger = await freshLogger();
    const tomasz = await demoAgent(t, 'Tomasz');
    const siteId = await siteIdNamed('Aldmere Village Hall');
    const res = await tomasz.agent.post('/api/enrollments').set(csrf).send({ ...tableOneInstall, token: logger.token, siteId });
    expect(res.status).toBe(201);
    const { profile } = res.body;
    // Eq. 2: the current LSB is never below max / 2^15; here exactly 1 mA.
    expect(profile.currentLsbA).toBeGreaterThanOrEqual(32.768 / 2 ** 15);
    expect(profile.currentLsbA).toBe(0.001);
    expect(profile.calibration).toBe(2560); // Eq. 1 and Table 1: A00h
    expect(profile.calibration).toBe(0xa00);
    expect(profile.powerLsbW).toBe(0.025); // Power_LSB = 25 × Current_LSB; Table 1: 25 mW
    expect(profile).toMatchObject({ version: 1, shuntOhm: 0.002, maxCurrentA: 32.768, busVMax: 36, tempResolutionBits: 12, panelWp: 400, panelVocV: 22.4 });
    // DS18B20 data sheet (docs/SOURCES.md §9): 750 ms maximum conversion at 12 bits; sampling at least 4× that long is our rule.
    expect(profile.sampleIntervalS * 1000).toBeGreaterThanOrEqual(4 * 750);
    expect(res.body.logger).toMatchObject({
      id: logger.id,
      status: 'enrolled',
      online: false,
      site: { id: siteId, name: 'Aldmere Village Hall' },
      enrolledBy: { id: tomasz.id, name: 'Tomasz' },
      install: { panelWp: 400, panelVocV: 22.4, notes: 'Leads fused at the combiner box', photo: false },
      profile: { version: 1, calibration: 2560 },
    });
    expect(await Activity.count({ where: { action: 'logger.enrolled', targetId: logger.id } })).toBe(1);
  });

  test('when the inputs need a rounded current LSB, then CAL = trunc(0.00512 / (LSB × R_SHUNT)) with LSB ≥ max / 2^15 (Eq. 1 and 2)', async () => {
    const logger = await freshLogger();
    const { agent } = await demoAgent(t, 'Morgan');
    const res = await agent.post('/api/enrollments').set(csrf).send({ ...tableOneInstall, maxCurrentA: 15, token: logger.token, siteId: await siteIdNamed('Hollins Dairy') });
    expect(res.status).toBe(201);
    const { currentLsbA, calibration, powerLsbW } = res.body.profile;
    // Eq. 2 for 15 A: 457.7 µA minimum (SBOS547 prints 457.7 µA); the stored LSB must cover it.
    expect(currentLsbA).toBeGreaterThanOrEqual(15 / 32768);
    // Eq. 1 on the LSB the server chose, in whole micro-amps so the arithmetic is exact:
    // 0.00512 / (n µA × 0.002 Ω) = 0.00512 / (n × 2e-9) = 2 560 000 / n.
    const lsbMicroA = Math.round(currentLsbA * 1e6);
    expect(lsbMicroA).toBeCloseTo(currentLsbA * 1e6, 6);
    expect(calibration).toBe(Math.trunc(2_560_000 / lsbMicroA));
    expect(powerLsbW).toBeCloseTo(25 * currentLsbA, 12);
  });

  test('when the shunt voltage at full current exceeds the chip\'s 81.92 mV (SBOS547), then 400 names shuntOhm and the limit, and nothing is stored', async () => {
    const logger = await freshLogger();
    const { agent } = await demoAgent(t, 'Morgan');
    // 10 A through 10 mΩ is 100 mV across the shunt.
    const res = await agent.post('/api/enrollments').set(csrf).send({ ...tableOneInstall, shuntOhm: 0.01, maxCurrentA: 10, token: logger.token, siteId: await siteIdNamed('Hollins Dairy') });
    expect(res.status).toBe(400);
    const error = res.body.errors.find((e: { path: string }) => e.path === 'shuntOhm');
    expect(error.message).toContain('81.92 mV');
    expect(error.message).toContain('100 mV');
    expect((await Logger.findByPk(logger.id))?.status).toBe('registered');
    expect(await MeasurementProfile.count({ where: { loggerId: logger.id } })).toBe(0);
  });

  test('when the calibration would exceed the 15-bit register (1…32767, SBOS547 register map), then 400 names the register range', async () => {
    const logger = await freshLogger();
    const { agent } = await demoAgent(t, 'Morgan');
    // 0.5 A on a 0.1 mΩ shunt: Eq. 2 gives ≥ 15.3 µA, and 0.00512 / (15.3 µA × 0.0001 Ω) is far above 32767.
    const res = await agent.post('/api/enrollments').set(csrf).send({ ...tableOneInstall, shuntOhm: 0.0001, maxCurrentA: 0.5, token: logger.token, siteId: await siteIdNamed('Hollins Dairy') });
    expect(res.status).toBe(400);
    const error = res.body.errors.find((e: { path: string }) => e.path === 'maxCurrentA');
    expect(error.message).toContain('32767');
  });

  test('when the panel open-circuit voltage is above the 36 V bus limit (SBOS547), then 400 names panelVocV and the limit', async () => {
    const logger = await freshLogger();
    const { agent } = await demoAgent(t, 'Morgan');
    const res = await agent.post('/api/enrollments').set(csrf).send({ ...tableOneInstall, panelVocV: 44.6, token: logger.token, siteId: await siteIdNamed('Hollins Dairy') });
    expect(res.status).toBe(400);
    expect(res.body.errors).toHaveLength(1);
    expect(res.body.errors[0].path).toBe('panelVocV');
    expect(res.body.errors[0].message).toContain('36 V');
    expect(res.body.detail).toContain('panel voltage limit');
  });

  test('when the site is cold enough that the panel voltage rises above the 36 V limit, then 400 names panelVocV and nothing is enrolled', async () => {
    // 33.0 V × (1 + (−0.30/100) × (−10 − 25)) = 33.0 × 1.105 = 36.465 V > 36 V (IEC 62548, NEC 2023 690.7(A); docs/SOURCES.md §14).
    const logger = await freshLogger();
    const { agent } = await demoAgent(t, 'Morgan');
    const site = await agent.post('/api/sites').set(csrf).send({ name: 'Aldmere Cold Barn', customer: 'Fernhollow Energy Co-op', address: 'Aldmere Vale', timeZone: 'Europe/London', minTempC: -10 });
    expect(site.status).toBe(201);
    expect(site.body.minTempC).toBe(-10);
    const res = await agent.post('/api/enrollments').set(csrf).send({ ...tableOneInstall, panelVocV: 33, vocTempCoeffPctPerC: -0.3, token: logger.token, siteId: site.body.id });
    expect(res.status).toBe(400);
    expect(res.headers['content-type']).toContain('application/problem+json');
    expect(res.body.errors[0].path).toBe('panelVocV');
    expect(res.body.errors[0].message).toContain("Above the logger's input rating — do not connect");
    const lookup = await agent.post('/api/enrollments/lookup').set(csrf).send({ token: logger.token });
    expect(lookup.body.logger.status).toBe('registered');
  });

  test('when the model does not allow the probe resolution, then 400 names the resolutions it allows', async () => {
    const admin = await demoAgent(t, 'Morgan');
    const model = await admin.agent.post('/api/models').set(csrf).send({
      name: 'FL-2 coarse probe', boards: [{ label: 'A', note: '' }], minUpdateSupplyV: 4.6, checkInIntervalS: 900, busVMax: 36, shuntFullScaleV: 0.08192, tempResolutions: [11, 12],
    });
    const logger = await freshLogger(model.body.id, 'A');
    const res = await admin.agent.post('/api/enrollments').set(csrf).send({ ...tableOneInstall, tempResolutionBits: 9, token: logger.token, siteId: await siteIdNamed('Hollins Dairy') });
    expect(res.status).toBe(400);
    expect(res.body.errors[0].path).toBe('tempResolutionBits');
    expect(res.body.errors[0].message).toContain('11 or 12');
  });

  test('when an integrator enrolls at a site not assigned to them, then 403 and the logger stays registered', async () => {
    const logger = await freshLogger();
    const { agent } = await demoAgent(t, 'Tomasz');
    const res = await agent.post('/api/enrollments').set(csrf).send({ ...tableOneInstall, token: logger.token, siteId: await siteIdNamed('Hollins Dairy') });
    expect(res.status).toBe(403);
    expect((await Logger.findByPk(logger.id))?.status).toBe('registered');
  });

  test('when a logger is enrolled twice, then 409 names the site and points to Move', async () => {
    const logger = await freshLogger();
    const { agent } = await demoAgent(t, 'Ade');
    const siteId = await siteIdNamed('Brackenford Pump House');
    expect((await agent.post('/api/enrollments').set(csrf).send({ ...tableOneInstall, token: logger.token, siteId })).status).toBe(201);
    const again = await agent.post('/api/enrollments').set(csrf).send({ ...tableOneInstall, token: logger.token, siteId });
    expect(again.status).toBe(409);
    expect(again.body.detail).toContain('already enrolled at Brackenford Pump House');
    expect(again.body.detail).toContain('Move');
  });

  test('when the token is unknown at enrollment, then 404 with the clear message', async () => {
    const { agent } = await demoAgent(t, 'Morgan');
    const res = await agent.post('/api/enrollments').set(csrf).send({ ...tableOneInstall, token: `hlt_${'b'.repeat(43)}`, siteId: await siteIdNamed('Hollins Dairy') });
    expect(res.status).toBe(404);
    expect(res.body.detail).toMatch(/^This label is not known/);
  });
});

async function enrolledLogger(site = 'Aldmere Village Hall') {
  const logger = await freshLogger();
  const { agent } = await demoAgent(t, 'Morgan');
  const res = await agent.post('/api/enrollments').set(csrf).send({ ...tableOneInstall, token: logger.token, siteId: await siteIdNamed(site) });
  if (res.status !== 201) throw new Error(`enrollment failed: ${JSON.stringify(res.body)}`);
  return logger;
}

describe('moving an enrolled logger', () => {
  test('when an admin moves a logger, then its site changes and logger.moved names both sites', async () => {
    const logger = await enrolledLogger();
    const { agent } = await demoAgent(t, 'Morgan');
    const to = await siteIdNamed('Aldwater Boat Club');
    const res = await agent.post(`/api/loggers/${logger.id}/move`).set(csrf).send({ siteId: to });
    expect(res.status).toBe(200);
    expect(res.body.site).toMatchObject({ id: to, name: 'Aldwater Boat Club' });
    expect(res.body.profile.version).toBe(1);
    const activity = await Activity.findOne({ where: { action: 'logger.moved', targetId: logger.id } });
    expect(activity?.summary).toContain('Aldmere Village Hall');
    expect(activity?.summary).toContain('Aldwater Boat Club');
    expect((await agent.post(`/api/loggers/${logger.id}/move`).set(csrf).send({ siteId: to })).status).toBe(409);
  });

  test('when an integrator moves a logger to a site not assigned to them, then 403 and it stays', async () => {
    const logger = await enrolledLogger();
    const { agent } = await demoAgent(t, 'Tomasz');
    const res = await agent.post(`/api/loggers/${logger.id}/move`).set(csrf).send({ siteId: await siteIdNamed('Hollins Dairy') });
    expect(res.status).toBe(403);
    expect((await Logger.findByPk(logger.id))?.siteId).toBe(await siteIdNamed('Aldmere Village Hall'));
    const ok = await agent.post(`/api/loggers/${logger.id}/move`).set(csrf).send({ siteId: await siteIdNamed('Aldmere Primary School') });
    expect(ok.status).toBe(200);
  });

  test('when the logger is not enrolled yet, then move is 409', async () => {
    const logger = await freshLogger();
    const { agent } = await demoAgent(t, 'Morgan');
    expect((await agent.post(`/api/loggers/${logger.id}/move`).set(csrf).send({ siteId: await siteIdNamed('Hollins Dairy') })).status).toBe(409);
  });
});

describe('profile changes', () => {
  test('when the shunt is changed, then a version 2 profile is stored, the detail shows it, and profile.changed is written', async () => {
    const logger = await enrolledLogger();
    const { agent } = await demoAgent(t, 'Tomasz');
    // 16.384 A on 4 mΩ: Eq. 2 gives exactly 0.5 mA; Eq. 1 gives 0.00512 / (0.0005 × 0.004) = 2560 (by hand);
    // 16.384 A × 4 mΩ = 65.536 mV, under the shunt register's 7FFFh = 81.9175 mV (SBOS547).
    const res = await agent.patch(`/api/loggers/${logger.id}/profile`).set(csrf).send({ shuntOhm: 0.004, maxCurrentA: 16.384, tempResolutionBits: 10 });
    expect(res.status).toBe(200);
    expect(res.body).toMatchObject({ version: 2, shuntOhm: 0.004, maxCurrentA: 16.384, currentLsbA: 0.0005, calibration: 2560, powerLsbW: 0.0125, tempResolutionBits: 10, panelWp: 400, panelVocV: 22.4 });
    const detail = await agent.get(`/api/loggers/${logger.id}`);
    expect(detail.body.profile).toEqual(res.body);
    expect(await MeasurementProfile.count({ where: { loggerId: logger.id } })).toBe(2);
    expect(await Activity.count({ where: { action: 'profile.changed', targetId: logger.id } })).toBe(1);
    const third = await agent.patch(`/api/loggers/${logger.id}/profile`).set(csrf).send({ shuntOhm: 0.004, maxCurrentA: 16.384, tempResolutionBits: 12, panelVocV: 37 });
    expect(third.status).toBe(400);
    expect(third.body.errors[0].path).toBe('panelVocV');
    expect(await MeasurementProfile.count({ where: { loggerId: logger.id } })).toBe(2);
  });

  test('when an integrator changes the profile of a logger at a site not assigned to them, then 403', async () => {
    const logger = await enrolledLogger('Hollins Dairy');
    const { agent } = await demoAgent(t, 'Tomasz');
    expect((await agent.patch(`/api/loggers/${logger.id}/profile`).set(csrf).send({ shuntOhm: 0.002, maxCurrentA: 20, tempResolutionBits: 12 })).status).toBe(403);
  });
});

// First bytes of the formats: PNG signature (W3C PNG specification §5.2), JPEG SOI + APP0 marker (ITU-T T.81 / JFIF).
const pngBytes = Buffer.concat([Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]), Buffer.alloc(2048, 7)]);
const jpegBytes = Buffer.concat([Buffer.from([0xff, 0xd8, 0xff, 0xe0]), Buffer.alloc(4096, 3)]);
const gifBytes = Buffer.concat([Buffer.from('GIF89a', 'ascii'), Buffer.alloc(512, 1)]);

describe('install photo', () => {
  test('when a PNG is uploaded, then 204, the detail says there is a photo, and GET returns the same bytes as image/png', async () => {
    const logger = await enrolledLogger();
    const { agent } = await demoAgent(t, 'Tomasz');
    const res = await agent.post(`/api/loggers/${logger.id}/photo`).set(csrf).attach('photo', pngBytes, { filename: 'install.png', contentType: 'image/png' });
    expect(res.status).toBe(204);
    const detail = await agent.get(`/api/loggers/${logger.id}`);
    expect(detail.body.install.photo).toBe(true);
    const photo = await agent.get(`/api/loggers/${logger.id}/photo`).buffer(true).parse((r, done) => {
      const chunks: Buffer[] = [];
      r.on('data', (c: Buffer) => chunks.push(c));
      r.on('end', () => done(null, Buffer.concat(chunks)));
    });
    expect(photo.status).toBe(200);
    expect(photo.headers['content-type']).toMatch(/^image\/png/);
    expect(Buffer.compare(photo.body as Buffer, pngBytes)).toBe(0);
    expect(await Activity.count({ where: { action: 'logger.photo_added', targetId: logger.id } })).toBe(1);
  });

  test('when a JPEG replaces it, then the newer photo is served as image/jpeg', async () => {
    const logger = await enrolledLogger();
    const { agent } = await demoAgent(t, 'Morgan');
    await agent.post(`/api/loggers/${logger.id}/photo`).set(csrf).attach('photo', pngBytes, 'a.png');
    expect((await agent.post(`/api/loggers/${logger.id}/photo`).set(csrf).attach('photo', jpegBytes, 'b.jpg')).status).toBe(204);
    const photo = await agent.get(`/api/loggers/${logger.id}/photo`);
    expect(photo.headers['content-type']).toMatch(/^image\/jpeg/);
  });

  test('when the file is a GIF, or text named .jpg, then 400 and nothing is stored', async () => {
    const logger = await enrolledLogger();
    const { agent } = await demoAgent(t, 'Morgan');
    for (const [bytes, name, type] of [
      [gifBytes, 'install.gif', 'image/gif'],
      [Buffer.from('not a picture'), 'install.jpg', 'image/jpeg'],
    ] as const) {
      const res = await agent.post(`/api/loggers/${logger.id}/photo`).set(csrf).attach('photo', bytes, { filename: name, contentType: type });
      expect(res.status).toBe(400);
      expect(res.body.errors).toEqual([{ path: 'photo', message: 'must be a JPEG or PNG image' }]);
    }
    expect((await agent.get(`/api/loggers/${logger.id}/photo`)).status).toBe(404);
    expect((await Logger.findByPk(logger.id))?.install).not.toHaveProperty('photo');
  });

  test('when the photo is larger than 10 MB, then 413 and nothing is stored', async () => {
    const logger = await enrolledLogger();
    const { agent } = await demoAgent(t, 'Morgan');
    const big = Buffer.concat([jpegBytes, Buffer.alloc(10 * 1024 * 1024, 0)]);
    const res = await agent.post(`/api/loggers/${logger.id}/photo`).set(csrf).attach('photo', big, 'big.jpg');
    expect(res.status).toBe(413);
    const [[{ n }]] = (await t.sequelize.query('SELECT count(*)::int AS n FROM logger_photos WHERE logger_id = :id', { replacements: { id: logger.id } })) as [{ n: number }[], unknown];
    expect(n).toBe(0);
    expect((await Logger.findByPk(logger.id))?.install).not.toHaveProperty('photo');
  });

  test('when no file is attached, then 400; when support uploads, then 403', async () => {
    const logger = await enrolledLogger();
    const admin = await demoAgent(t, 'Morgan');
    expect((await admin.agent.post(`/api/loggers/${logger.id}/photo`).set(csrf).field('x', '1')).status).toBe(400);
    const support = await demoAgent(t, 'Lena');
    expect((await support.agent.post(`/api/loggers/${logger.id}/photo`).set(csrf).attach('photo', pngBytes, 'a.png')).status).toBe(403);
  });
});

describe('with the device API', () => {
  const CHECK_IN = '/api/device/v1/check-in';
  const checkIn = (token: string, configVersion?: number) =>
    t
      .request()
      .post(CHECK_IN)
      .set('Authorization', `Bearer ${token}`)
      .send({ firmware: '2.1.4', board: 'B', security_counter: 0, ...(configVersion === undefined ? {} : { config_version: configVersion }) });

  test('when a logger enrolled here checks in, then it receives the profile in the device fields, and a profile change reaches it as version 2', async () => {
    const logger = await enrolledLogger();
    const first = await checkIn(logger.token);
    expect(first.status).toBe(200);
    // DEVICE_API.md `config`: the same values as the console profile, in snake_case (Table 1 values, SBOS547).
    expect(first.body.config).toMatchObject({ version: 1, shunt_ohm: 0.002, max_current_a: 32.768, current_lsb_a: 0.001, calibration: 2560, power_lsb_w: 0.025, bus_v_max: 36, temp_resolution_bits: 12 });
    const { agent } = await demoAgent(t, 'Morgan');
    const changed = await agent.patch(`/api/loggers/${logger.id}/profile`).set(csrf).send({ shuntOhm: 0.004, maxCurrentA: 16.384, tempResolutionBits: 12 });
    expect(changed.status).toBe(200);
    const second = await checkIn(logger.token, 1);
    expect(second.body.config).toMatchObject({ version: 2, shunt_ohm: 0.004, calibration: 2560 });
  });

  test('when a token is rotated, then the old one is refused with 401 at once and the new one checks in; once retired, 401', async () => {
    const logger = await enrolledLogger();
    const { agent } = await demoAgent(t, 'Morgan');
    const rotated = await agent.post(`/api/loggers/${logger.id}/token`).set(csrf);
    expect((await checkIn(logger.token)).status).toBe(401);
    expect((await checkIn(rotated.body.token)).status).toBe(200);
    await agent.post(`/api/loggers/${logger.id}/retire`).set(csrf).send({});
    expect((await checkIn(rotated.body.token)).status).toBe(401);
  });
});
