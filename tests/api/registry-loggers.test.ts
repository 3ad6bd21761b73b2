// Logger registration: one at a time and by CSV batch, tokens and labels, rotation, retirement,
// the list and detail, roles.
import { createHash } from 'node:crypto';
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { Activity, Logger } from '../../server/db/models';
import { findLoggerByToken } from '../../server/loggers/tokens';
import { decodeLabel, demoAgent, demoModelId, everyTextValue, siteIdNamed } from './registry-helpers';

let t: TestApp;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
});
afterAll(() => t.close());

// DEVICE_API.md, Authentication: `hlt_` then 43 characters of base64url (32 random bytes, RFC 4648 §5).
const tokenFormat = /^hlt_[A-Za-z0-9_-]{43}$/;

describe('registering one logger', () => {
  test('when an admin registers a logger, then 201 carries id, serial, board, channel, model, a token in the device format and a label whose QR decodes to <origin>/enroll?t=<token>', async () => {
    const { agent } = await demoAgent(t, 'Morgan');
    const modelId = await demoModelId();
    const res = await agent.post('/api/loggers').set(csrf).set('Host', 'console.fernhollow.example').send({ serial: 'FL2-03001', modelId, board: 'b', channel: 'early' });
    expect(res.status).toBe(201);
    expect(res.body).toMatchObject({ serial: 'FL2-03001', board: 'B', channel: 'early', modelId, modelName: 'FL-2 field logger' });
    expect(res.body.token).toMatch(tokenFormat);
    expect(Buffer.from(res.body.token.slice(4), 'base64url')).toHaveLength(32);
    expect(decodeLabel(res.body.labelPng)).toBe(`http://console.fernhollow.example/enroll?t=${res.body.token}`);
    expect(await Activity.count({ where: { action: 'logger.registered', targetId: res.body.id } })).toBe(1);
    const stored = await Logger.findByPk(res.body.id);
    expect(stored?.status).toBe('registered');
    expect((await findLoggerByToken(res.body.token))?.id).toBe(res.body.id);
  });

  test('when the console has a public URL, then the label links there instead of the request origin', async () => {
    const { agent } = await demoAgent(t, 'Tomasz');
    const config = t.app.services.config as { publicUrl?: string };
    config.publicUrl = 'https://console.fernhollow.example';
    try {
      const res = await agent.post('/api/loggers').set(csrf).send({ serial: 'FL2-03002', modelId: await demoModelId(), board: 'C' });
      expect(res.status).toBe(201);
      expect(res.body.channel).toBe('stable');
      expect(decodeLabel(res.body.labelPng)).toBe(`https://console.fernhollow.example/enroll?t=${res.body.token}`);
    } finally {
      config.publicUrl = undefined;
    }
  });

  test('when the serial is already registered, in any capitals, then 409 and nothing is added', async () => {
    const { agent } = await demoAgent(t, 'Morgan');
    const before = await Logger.count();
    const res = await agent.post('/api/loggers').set(csrf).send({ serial: 'fl2-02401', modelId: await demoModelId(), board: 'A' });
    expect(res.status).toBe(409);
    expect(res.body.detail).toContain('FL2-02401');
    expect(await Logger.count()).toBe(before);
  });

  test('when the model is unknown or the board is not one of its revisions, then 400 names the field', async () => {
    const { agent } = await demoAgent(t, 'Morgan');
    const unknown = await agent.post('/api/loggers').set(csrf).send({ serial: 'FL2-03003', modelId: '00000000-0000-4000-8000-000000000000', board: 'A' });
    expect(unknown.status).toBe(400);
    expect(unknown.body.errors.map((e: { path: string }) => e.path)).toEqual(['modelId']);
    const board = await agent.post('/api/loggers').set(csrf).send({ serial: 'FL2-03003', modelId: await demoModelId(), board: 'D' });
    expect(board.status).toBe(400);
    expect(board.body.errors[0]).toMatchObject({ path: 'board' });
    expect(board.body.errors[0].message).toContain('A, B, C');
    const bad = await agent.post('/api/loggers').set(csrf).send({ serial: 'x', modelId: 'nope', board: '', channel: 'beta' });
    expect(bad.status).toBe(400);
    expect(bad.body.errors.map((e: { path: string }) => e.path).sort()).toEqual(['board', 'channel', 'modelId', 'serial']);
  });

  test('when support or a release engineer tries to register, then 403', async () => {
    for (const name of ['Lena', 'Priya'] as const) {
      const { agent } = await demoAgent(t, name);
      const res = await agent.post('/api/loggers').set(csrf).send({ serial: `FL2-0310${name.length}`, modelId: await demoModelId(), board: 'A' });
      expect(res.status).toBe(403);
    }
  });
});

function csv(lines: string[]): Buffer {
  return Buffer.from(lines.join('\n') + '\n', 'utf8');
}

describe('registering a batch from CSV', () => {
  test('when the file is good, then 201 lists every logger with its own token, in file order, and one activity row counts them', async () => {
    const { agent } = await demoAgent(t, 'Morgan');
    const file = csv(['serial,model,board,channel', 'FL2-04001,FL-2 field logger,A,stable', 'FL2-04002,fl-2 field logger,b,', 'FL2-04003,FL-2 field logger,C,early']);
    const res = await agent.post('/api/loggers/batch').set(csrf).attach('file', file, { filename: 'aldmere-batch.csv', contentType: 'text/csv' });
    expect(res.status).toBe(201);
    expect(res.body.total).toBe(3);
    expect(res.body.rows.map((r: { serial: string; board: string; channel: string; modelName: string }) => [r.serial, r.board, r.channel, r.modelName])).toEqual([
      ['FL2-04001', 'A', 'stable', 'FL-2 field logger'],
      ['FL2-04002', 'B', 'stable', 'FL-2 field logger'],
      ['FL2-04003', 'C', 'early', 'FL-2 field logger'],
    ]);
    const tokens = res.body.rows.map((r: { token: string }) => r.token);
    for (const token of tokens) expect(token).toMatch(tokenFormat);
    expect(new Set(tokens).size).toBe(3);
    for (const row of res.body.rows) expect((await findLoggerByToken(row.token))?.id).toBe(row.id);
    const activity = await Activity.findAll({ where: { action: 'logger.batch_registered' } });
    expect(activity).toHaveLength(1);
    expect(activity[0].details).toMatchObject({ count: 3 });
  });

  test('when 5 000 rows hold one bad line, then 422 names that line and nothing is stored', async () => {
    const { agent } = await demoAgent(t, 'Morgan');
    const lines = ['serial,model,board'];
    for (let i = 0; i < 5000; i++) lines.push(`FL2-5${String(i).padStart(4, '0')},FL-2 field logger,${'ABC'[i % 3]}`);
    lines[3142] = 'FL2-53141,FL-2 field logger,Z'; // file line 3143 (header = line 1): board Z is not a revision
    const before = await Logger.count();
    const activityBefore = await Activity.count();
    const res = await agent.post('/api/loggers/batch').set(csrf).attach('file', csv(lines), 'big.csv');
    expect(res.status).toBe(422);
    expect(res.headers['content-type']).toMatch(/problem\+json/);
    expect(res.body.errors).toEqual([{ line: 3143, path: 'board', message: expect.stringContaining('"Z"') }]);
    expect(res.body.detail).toContain('line 3143');
    expect(await Logger.count()).toBe(before);
    expect(await Activity.count()).toBe(activityBefore);
  });

  test('when the same 5 000 rows are all good, then all 5 000 are stored in one go', async () => {
    const { agent } = await demoAgent(t, 'Morgan');
    const lines = ['serial,model,board'];
    for (let i = 0; i < 5000; i++) lines.push(`FL2-6${String(i).padStart(4, '0')},FL-2 field logger,${'ABC'[i % 3]}`);
    const before = await Logger.count();
    const res = await agent.post('/api/loggers/batch').set(csrf).attach('file', csv(lines), 'big.csv');
    expect(res.status).toBe(201);
    expect(res.body.total).toBe(5000);
    expect(await Logger.count()).toBe(before + 5000);
  });

  test('when the file is UTF-16 (wrong encoding), then 422 on line 1 asks for UTF-8 and nothing is stored', async () => {
    const { agent } = await demoAgent(t, 'Morgan');
    const text = 'serial,model,board\nFL2-07001,FL-2 field logger,A\n';
    const utf16 = Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(text, 'utf16le')]);
    const before = await Logger.count();
    const res = await agent.post('/api/loggers/batch').set(csrf).attach('file', utf16, 'utf16.csv');
    expect(res.status).toBe(422);
    expect(res.body.errors[0]).toMatchObject({ line: 1 });
    expect(res.body.errors[0].message).toMatch(/UTF-8/);
    expect(await Logger.count()).toBe(before);
  });

  test('when the columns are wrong, then 422 names the header (line 1) and nothing is stored', async () => {
    const { agent } = await demoAgent(t, 'Morgan');
    const res = await agent.post('/api/loggers/batch').set(csrf).attach('file', csv(['serial;model;board', 'FL2-07002;FL-2 field logger;A']), 'semi.csv');
    expect(res.status).toBe(422);
    expect(res.body.errors[0].line).toBe(1);
    const missing = await agent.post('/api/loggers/batch').set(csrf).attach('file', csv(['serial,model,colour', 'FL2-07002,FL-2 field logger,red']), 'cols.csv');
    expect(missing.status).toBe(422);
    expect(missing.body.errors.map((e: { line: number; path: string }) => [e.line, e.path]).sort()).toEqual([
      [1, 'board'],
      [1, 'colour'],
    ]);
    expect(await Logger.count({ where: { serial: 'FL2-07002' } })).toBe(0);
  });

  test('when a batch repeats a serial or names one already registered, then 422 names both lines', async () => {
    const { agent } = await demoAgent(t, 'Tomasz');
    const res = await agent
      .post('/api/loggers/batch')
      .set(csrf)
      .attach('file', csv(['serial,model,board', 'FL2-08001,FL-2 field logger,A', 'FL2-02401,FL-2 field logger,A', 'fl2-08001,FL-2 field logger,B']), 'dupes.csv');
    expect(res.status).toBe(422);
    expect(res.body.errors.map((e: { line: number }) => e.line)).toEqual([3, 4]);
  });

  test('when no file is attached, then 400 names the field', async () => {
    const { agent } = await demoAgent(t, 'Morgan');
    const res = await agent.post('/api/loggers/batch').set(csrf).field('note', 'no file');
    expect(res.status).toBe(400);
    expect(res.body.errors).toEqual([{ path: 'file', message: 'is required' }]);
  });

  test('when support uploads a batch, then 403 before the file is read', async () => {
    const { agent } = await demoAgent(t, 'Lena');
    const res = await agent.post('/api/loggers/batch').set(csrf).attach('file', csv(['serial,model,board', 'FL2-09001,FL-2 field logger,A']), 'x.csv');
    expect(res.status).toBe(403);
  });
});

describe('tokens are stored only as digests', () => {
  test('when loggers are registered singly and in a batch, then no text, JSON or byte column anywhere in the database holds a clear token', async () => {
    const { agent } = await demoAgent(t, 'Morgan');
    const single = await agent.post('/api/loggers').set(csrf).send({ serial: 'FL2-10001', modelId: await demoModelId(), board: 'A' });
    const batch = await agent.post('/api/loggers/batch').set(csrf).attach('file', csv(['serial,model,board', 'FL2-10002,FL-2 field logger,B']), 'one.csv');
    const rotated = await agent.post(`/api/loggers/${single.body.id}/token`).set(csrf);
    const tokens: string[] = [single.body.token, batch.body.rows[0].token, rotated.body.token];
    for (const token of tokens) expect(token).toMatch(tokenFormat);
    const values = await everyTextValue(t);
    expect(values.length).toBeGreaterThan(100);
    for (const token of tokens) {
      const secret = token.slice(4); // the random part, with or without the prefix
      const hex = Buffer.from(token, 'utf8').toString('hex');
      expect(values.filter((v) => v.includes(secret) || v.includes(hex))).toEqual([]);
    }
    // What is stored is the SHA-256 (FIPS 180-4) digest, computed here with node:crypto as the reference.
    expect((await Logger.findByPk(single.body.id))?.tokenDigest).toBe(createHash('sha256').update(rotated.body.token).digest('hex'));
  });
});

describe('rotating a token', () => {
  test('when an admin rotates a token, then the old token is no longer found, the new one is, and the new label carries it', async () => {
    const { agent } = await demoAgent(t, 'Morgan');
    const reg = await agent.post('/api/loggers').set(csrf).send({ serial: 'FL2-11001', modelId: await demoModelId(), board: 'B' });
    const res = await agent.post(`/api/loggers/${reg.body.id}/token`).set(csrf).set('Host', 'console.fernhollow.example');
    expect(res.status).toBe(200);
    expect(res.body).toMatchObject({ serial: 'FL2-11001', modelName: 'FL-2 field logger', board: 'B' });
    expect(res.body.token).toMatch(tokenFormat);
    expect(res.body.token).not.toBe(reg.body.token);
    expect(await findLoggerByToken(reg.body.token)).toBeNull();
    expect((await findLoggerByToken(res.body.token))?.id).toBe(reg.body.id);
    expect(decodeLabel(res.body.labelPng)).toBe(`http://console.fernhollow.example/enroll?t=${res.body.token}`);
    expect(await Activity.count({ where: { action: 'logger.token_rotated', targetId: reg.body.id } })).toBe(1);
  });

  test('when an integrator tries to rotate a token, then 403 and the token still works', async () => {
    const admin = await demoAgent(t, 'Morgan');
    const reg = await admin.agent.post('/api/loggers').set(csrf).send({ serial: 'FL2-11002', modelId: await demoModelId(), board: 'B' });
    const { agent } = await demoAgent(t, 'Tomasz');
    expect((await agent.post(`/api/loggers/${reg.body.id}/token`).set(csrf)).status).toBe(403);
    expect((await findLoggerByToken(reg.body.token))?.id).toBe(reg.body.id);
  });
});

describe('retiring a logger', () => {
  test('when an admin retires a logger, then its token is revoked, the detail shows retired, and rotation or a second retirement is 409', async () => {
    const { agent } = await demoAgent(t, 'Morgan');
    const reg = await agent.post('/api/loggers').set(csrf).send({ serial: 'FL2-12001', modelId: await demoModelId(), board: 'C' });
    const res = await agent.post(`/api/loggers/${reg.body.id}/retire`).set(csrf).send({ reason: 'Enclosure cracked in storage' });
    expect(res.status).toBe(200);
    expect(res.body).toMatchObject({ id: reg.body.id, status: 'retired', online: false });
    expect(new Date(res.body.retiredAt).toISOString()).toBe(res.body.retiredAt);
    expect(await findLoggerByToken(reg.body.token)).toBeNull();
    const activity = await Activity.findOne({ where: { action: 'logger.retired', targetId: reg.body.id } });
    expect(activity?.summary).toContain('Enclosure cracked');
    expect((await agent.post(`/api/loggers/${reg.body.id}/retire`).set(csrf).send({})).status).toBe(409);
    expect((await agent.post(`/api/loggers/${reg.body.id}/token`).set(csrf)).status).toBe(409);
  });

  test('when an integrator tries to retire, then 403', async () => {
    const { agent } = await demoAgent(t, 'Ade');
    const logger = await Logger.findOne({ where: { serial: 'FL2-02402' } });
    expect((await agent.post(`/api/loggers/${logger!.id}/retire`).set(csrf).send({})).status).toBe(403);
  });
});

describe('the logger list and detail', () => {
  test('when support lists loggers, then rows carry the contract fields, 25 per page by default, with a cursor while more rows follow', async () => {
    const { agent } = await demoAgent(t, 'Lena');
    const res = await agent.get('/api/loggers');
    expect(res.status).toBe(200);
    // Past 1 000 matching rows the total is the planner's estimate and says so; below, it is exact.
    const exact = await Logger.count();
    expect(res.body.totalIsEstimate).toBe(exact > 1000);
    if (exact <= 1000) expect(res.body.total).toBe(exact);
    expect(res.body.rows).toHaveLength(25);
    expect(typeof res.body.nextCursor).toBe('string');
    // The registry contract's fields; the fleet view may add more to the same rows.
    expect(Object.keys(res.body.rows[0])).toEqual(
      expect.arrayContaining(['id', 'serial', 'modelId', 'modelName', 'board', 'channel', 'status', 'siteId', 'siteName', 'customer', 'firmware', 'lastSeenAt', 'supplyV']),
    );
    const page2 = await agent.get('/api/loggers').query({ page: 2, pageSize: 50 });
    expect(page2.body.rows).toHaveLength(50);
    expect(page2.body.rows[0].serial).not.toBe(res.body.rows[0].serial);
    expect((await agent.get('/api/loggers').query({ pageSize: 30 })).status).toBe(400);
  });

  test('when filtered by site, status and a search word, then only matching loggers come back', async () => {
    const { agent } = await demoAgent(t, 'Morgan');
    const siteId = await siteIdNamed('Hollins Dairy');
    const bySite = await agent.get('/api/loggers').query({ siteId });
    expect(bySite.body.total).toBe(2);
    for (const row of bySite.body.rows) expect(row).toMatchObject({ siteId, siteName: 'Hollins Dairy', customer: 'Hollins Dairy Farm', status: 'enrolled' });
    const byWord = await agent.get('/api/loggers').query({ q: 'dairy farm' });
    expect(byWord.body.rows.map((r: { id: string }) => r.id).sort()).toEqual(bySite.body.rows.map((r: { id: string }) => r.id).sort());
    const retired = await agent.get('/api/loggers').query({ status: 'retired' });
    expect(retired.body.total).toBe(await Logger.count({ where: { status: 'retired' } }));
  });

  test('when an integrator lists loggers, then only loggers at their sites or registered by them appear, and another site\'s logger is 403', async () => {
    const ade = await demoAgent(t, 'Ade');
    const res = await ade.agent.get('/api/loggers').query({ pageSize: 100 });
    expect(res.status).toBe(200);
    expect(res.body.total).toBe(6); // three demo sites with two loggers each (server/db/seed/scenario.ts)
    const tomaszSite = await siteIdNamed('Aldmere Village Hall');
    const other = await Logger.findOne({ where: { siteId: tomaszSite } });
    expect((await ade.agent.get(`/api/loggers/${other!.id}`)).status).toBe(403);
    const own = await ade.agent.post('/api/loggers').set(csrf).send({ serial: 'FL2-13001', modelId: await demoModelId(), board: 'A' });
    expect((await ade.agent.get(`/api/loggers/${own.body.id}`)).status).toBe(200);
    expect((await ade.agent.get('/api/loggers').query({ pageSize: 100 })).body.total).toBe(7);
  });

  test('when the detail of a seeded enrolled logger is read, then it names the site, who enrolled it and whether it is online', async () => {
    const { agent } = await demoAgent(t, 'Lena');
    const logger = await Logger.findOne({ where: { serial: 'FL2-02401' } });
    const res = await agent.get(`/api/loggers/${logger!.id}`);
    expect(res.status).toBe(200);
    expect(res.body).toMatchObject({
      serial: 'FL2-02401',
      status: 'enrolled',
      site: { name: 'Aldmere Village Hall', customer: 'Aldmere Parish Council' },
      enrolledBy: { name: 'Tomasz' },
      profile: null,
      retiredAt: null,
    });
    // Seeded as seen 5 minutes ago with a 900 s check-in interval: within three intervals, so online.
    expect(res.body.online).toBe(true);
    expect((await agent.get('/api/loggers/00000000-0000-4000-8000-000000000000')).status).toBe(404);
  });
});

describe('what each person may do with a logger (can)', () => {
  // PRODUCT.md roles: the admin everything; integrators enroll, place and re-profile loggers at their own
  // sites; support and release engineers add notes. A retired logger takes no token, move or profile.
  const open = (can: Record<string, boolean>) => Object.keys(can).filter((verb) => can[verb]).sort();

  test('when each role reads an enrolled logger at Tomasz\'s site, then can follows the roles table and his sites', async () => {
    const logger = await Logger.findOne({ where: { serial: 'FL2-02401' } }); // Aldmere Village Hall, Tomasz's site
    const can = async (name: 'Morgan' | 'Priya' | 'Tomasz' | 'Lena') => open((await (await demoAgent(t, name)).agent.get(`/api/loggers/${logger!.id}`)).body.can);
    expect(await can('Morgan')).toEqual(['addNote', 'addPhoto', 'editProfile', 'move', 'retire', 'rotateToken']);
    expect(await can('Priya')).toEqual(['addNote']);
    expect(await can('Lena')).toEqual(['addNote']);
    expect(await can('Tomasz')).toEqual(['addPhoto', 'editProfile', 'move']);
  });

  test('when an integrator registers a logger, then its answers let them enroll it and add its photo, and a retired one offers the admin only notes', async () => {
    const ade = await demoAgent(t, 'Ade');
    const own = await ade.agent.post('/api/loggers').set(csrf).send({ serial: 'FL2-13101', modelId: await demoModelId(), board: 'A' });
    expect(open((await ade.agent.get(`/api/loggers/${own.body.id}`)).body.can)).toEqual(['addPhoto', 'enroll']);
    const morgan = await demoAgent(t, 'Morgan');
    const retired = await morgan.agent.post(`/api/loggers/${own.body.id}/retire`).set(csrf).send({});
    expect(retired.status).toBe(200);
    expect(open(retired.body.can)).toEqual(['addNote']);
  });
});
