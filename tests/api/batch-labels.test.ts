// New labels for a whole batch: when the one answer of a CSV registration (bench sheet and labels) is
// lost, an admin issues the batch's labels again in one action. Every logger of the batch still waiting
// for enrollment gets a new token and the old one stops working at once; enrolled loggers keep theirs
// (their boards run on them in the field) and retired ones stay retired; one activity row records it.
// Rules: docs/PRODUCT.md journey 1 ("Tokens cannot be shown again; a lost label means rotating the
// token, which makes the old label useless"); tokens stored only as SHA-256 (FIPS 180-4), as at
// registration.
import crypto from 'node:crypto';
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { Activity, Logger } from '../../server/db/models';
import { findLoggerByToken } from '../../server/loggers/tokens';
import { demoAgent, everyTextValue, siteIdNamed } from './registry-helpers';

let t: TestApp;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
});
afterAll(() => t.close());

const csv = (lines: string[]) => Buffer.from(`${lines.join('\r\n')}\r\n`, 'utf8');
type Row = { id: string; serial: string; token: string; board: string; channel: string; modelName: string };

/** Registers four loggers from a CSV as Morgan (admin); enrolls the first and retires the second. */
async function batchWithHistory(prefix: string) {
  const morgan = await demoAgent(t, 'Morgan');
  const serials = [1, 2, 3, 4].map((n) => `${prefix}${n}`);
  const file = csv(['serial,model,board,channel', ...serials.map((s, i) => `${s},FL-2 field logger,${'ABCB'[i]},stable`)]);
  const registered = await morgan.agent.post('/api/loggers/batch').set(csrf).attach('file', file, { filename: `${prefix}batch.csv`, contentType: 'text/csv' });
  expect(registered.status).toBe(201);
  const rows = registered.body.rows as Row[];
  const batchId = registered.body.batch.id as string;
  expect(registered.body.batch).toMatchObject({ fileName: `${prefix}batch.csv`, count: 4 });

  const tomasz = await demoAgent(t, 'Tomasz');
  const enrolled = await tomasz.agent.post('/api/enrollments').set(csrf).send({
    token: rows[0].token, siteId: await siteIdNamed('Aldmere Village Hall'), panelWp: 400, panelVocV: 22.4, shuntOhm: 0.002, maxCurrentA: 10, tempResolutionBits: 12,
  });
  expect(enrolled.status).toBe(201);
  expect((await morgan.agent.post(`/api/loggers/${rows[1].id}/retire`).set(csrf).send({ reason: 'dropped at the bench' })).status).toBe(200);
  return { morgan, rows, batchId };
}

describe('issuing a batch\'s labels again', () => {
  test('when an admin issues new labels for a batch, then the loggers still waiting get new tokens, the old labels stop working, and the enrolled and retired are left as they were', async () => {
    const { morgan, rows, batchId } = await batchWithHistory('FL2-RB');
    // The logger page names the batch and how many of its loggers still wait.
    const detail = await morgan.agent.get(`/api/loggers/${rows[2].id}`);
    expect(detail.body.batch).toMatchObject({ id: batchId, fileName: 'FL2-RBbatch.csv', count: 4, waiting: 2 });

    const res = await morgan.agent.post(`/api/batches/${batchId}/labels`).set(csrf);
    expect(res.status).toBe(200);
    expect(res.body.total).toBe(2);
    // The same rows as the registration's answer, so the console draws the same bench sheet and label sheet.
    expect(res.body.rows.map((r: Row) => [r.id, r.serial, r.board, r.channel, r.modelName])).toEqual([
      [rows[2].id, 'FL2-RB3', 'C', 'stable', 'FL-2 field logger'],
      [rows[3].id, 'FL2-RB4', 'B', 'stable', 'FL-2 field logger'],
    ]);
    expect(res.body.skipped).toEqual([
      { serial: 'FL2-RB1', status: 'enrolled' },
      { serial: 'FL2-RB2', status: 'retired' },
    ]);
    expect(res.body.batch).toMatchObject({ id: batchId, fileName: 'FL2-RBbatch.csv', count: 4 });

    const fresh = res.body.rows as Row[];
    for (const [i, row] of fresh.entries()) {
      expect(row.token).toMatch(/^hlt_/);
      expect(row.token).not.toBe(rows[i + 2].token);
      expect((await findLoggerByToken(row.token))?.id).toBe(row.id); // the new label works
      expect(await findLoggerByToken(rows[i + 2].token)).toBeNull(); // the old label no longer does
    }
    // The enrolled logger's token, on its board in the field, still works; the retired one's still does not.
    expect((await findLoggerByToken(rows[0].token))?.id).toBe(rows[0].id);
    expect(await findLoggerByToken(rows[1].token)).toBeNull();
    // A looked-up old label is the clear "unknown label" answer, not a logger.
    const tomasz = await demoAgent(t, 'Tomasz');
    expect((await tomasz.agent.post('/api/enrollments/lookup').set(csrf).send({ token: rows[2].token })).status).toBe(404);
    expect((await tomasz.agent.post('/api/enrollments/lookup').set(csrf).send({ token: fresh[0].token })).status).toBe(200);

    // One activity row for the one action.
    const activity = await Activity.findAll({ where: { action: 'logger.batch_labels_issued', targetId: batchId } });
    expect(activity).toHaveLength(1);
    expect(activity[0]).toMatchObject({ targetType: 'batch', actorName: 'Morgan' });
    expect(activity[0].details).toMatchObject({ count: 2, skipped: 1 + 1 });
    // Stored as SHA-256 only: neither the new tokens nor their digest-free text are anywhere in the database.
    const values = await everyTextValue(t);
    for (const row of fresh) {
      expect(values.some((v) => v.includes(row.token))).toBe(false);
      const digest = crypto.createHash('sha256').update(row.token).digest('hex');
      expect((await Logger.findByPk(row.id))?.tokenDigest).toBe(digest);
    }
  });

  test('when every logger of the batch is enrolled or retired, then 409 and nothing changes; an unknown batch is 404', async () => {
    const { morgan, rows, batchId } = await batchWithHistory('FL2-RC');
    for (const row of rows.slice(2)) expect((await morgan.agent.post(`/api/loggers/${row.id}/retire`).set(csrf).send({})).status).toBe(200);
    const before = await Logger.findAll({ where: { batchId }, order: [['serial', 'ASC']] });
    const res = await morgan.agent.post(`/api/batches/${batchId}/labels`).set(csrf);
    expect(res.status).toBe(409);
    expect(res.headers['content-type']).toMatch(/^application\/problem\+json/);
    const after = await Logger.findAll({ where: { batchId }, order: [['serial', 'ASC']] });
    expect(after.map((l) => l.tokenDigest)).toEqual(before.map((l) => l.tokenDigest));
    expect(await Activity.count({ where: { action: 'logger.batch_labels_issued', targetId: batchId } })).toBe(0);
    expect((await morgan.agent.post('/api/batches/6f1c2a4e-8b3d-4c5e-9f7a-0b1c2d3e4f5a/labels').set(csrf)).status).toBe(404);
  });

  test('when an integrator, a release engineer or support asks, then 403 and no token changes; without the request header a session cannot', async () => {
    const { morgan, rows, batchId } = await batchWithHistory('FL2-RD');
    for (const name of ['Tomasz', 'Priya', 'Lena'] as const) {
      expect((await (await demoAgent(t, name)).agent.post(`/api/batches/${batchId}/labels`).set(csrf)).status).toBe(403);
    }
    expect((await morgan.agent.post(`/api/batches/${batchId}/labels`)).status).toBe(403); // no X-Requested-With: a cross-site form
    expect((await findLoggerByToken(rows[2].token))?.id).toBe(rows[2].id);
  });

  test('when a logger was registered on its own, then its page names no batch', async () => {
    const morgan = await demoAgent(t, 'Morgan');
    const one = await morgan.agent.post('/api/loggers').set(csrf).send({ serial: 'FL2-RE1', modelId: (await Logger.findOne())!.modelId, board: 'B' });
    expect(one.status).toBe(201);
    expect((await morgan.agent.get(`/api/loggers/${one.body.id}`)).body.batch).toBeNull();
  });
});
