// Releases: the lifecycle over the API, targeting edits while draft, deleting a draft,
// counts from install reports, the flag for a revoked signing key, and the rollout-share estimate.
// Lifecycle expectations are the release lifecycle's complete table as the product specifies it (written
// out by hand in tests/unit/lifecycle.test.ts); the cohort bucket is checked against
// server/rollout/cohort.ts bucketOf (itself checked against node:crypto SHA-256 in its unit tests);
// the notes escaping follows OWASP's XSS prevention rule of HTML-escaping & < > " '.
import crypto from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import request from 'supertest';
import { QueryTypes } from 'sequelize';
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { Activity, Logger, LoggerModel, Release, ReleaseTransition, Site } from '../../server/db/models';
import { bucketOf } from '../../server/rollout/cohort';
import { demoModel, keyPair, postUpload, registerKey, signedUpload, storeEntries, type KeyPair } from './release-fixtures';
import { ALLOWED_ACTIONS } from '../helpers/lifecycle-table';

let t: TestApp;
let key: KeyPair;
let modelId: string;
let versionNo = 0;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
  key = keyPair();
  await registerKey(t, key, 'Release key');
  modelId = (await demoModel()).id;
});
afterAll(() => t.close());

// One signed-in session for the engineer (signing in hashes a password: slow on purpose).
let engineerAgent: Awaited<ReturnType<TestApp['signedIn']>> | undefined;
const engineer = async () => (engineerAgent ??= await t.signedIn('release_engineer', 'Priya Test'));

async function upload(options: { version?: string; boards?: string[]; image?: Buffer; signer?: KeyPair; model?: string } = {}) {
  versionNo += 1;
  const version = options.version ?? `5.${versionNo}.0`;
  const res = await postUpload((await engineer()).post('/api/releases').set(csrf), signedUpload(options.signer ?? key, { model: options.model ?? modelId, version, boards: options.boards, image: options.image }));
  if (res.status !== 201) throw new Error(`upload failed: ${res.status} ${JSON.stringify(res.body)}`);
  return res.body as { id: string; version: string; image: { sha256: string } };
}

type Step = { action: string; share?: number; reason?: string };
async function act(id: string, step: Step) {
  return (await engineer()).post(`/api/releases/${id}/transitions`).set(csrf).send(step);
}

/** Paths from draft into each state that matters (the lifecycle table). */
const into: Record<string, Step[]> = {
  draft: [],
  pilot: [{ action: 'start_pilot' }],
  widening: [{ action: 'start_pilot' }, { action: 'widen', share: 25 }],
  complete: [{ action: 'start_pilot' }, { action: 'complete' }],
  paused: [{ action: 'start_pilot' }, { action: 'widen', share: 25 }, { action: 'pause' }],
  stopped: [{ action: 'start_pilot' }, { action: 'widen', share: 25 }, { action: 'stop', reason: 'reset storm' }],
  withdrawn: [{ action: 'start_pilot' }, { action: 'withdraw', reason: 'wrong image' }],
};

const allowed: Record<string, readonly string[]> = ALLOWED_ACTIONS;

// [from state, step, expected status, expected state, expected share]
const table: [string, Step, number, string | null, number | null][] = [
  ['draft', { action: 'start_pilot' }, 200, 'pilot', 0],
  ['draft', { action: 'widen', share: 5 }, 409, null, null],
  ['draft', { action: 'complete' }, 409, null, null],
  ['pilot', { action: 'widen', share: 5 }, 200, 'widening', 5],
  ['pilot', { action: 'widen', share: 100 }, 400, null, null],
  ['pilot', { action: 'complete' }, 200, 'complete', 100],
  ['pilot', { action: 'pause' }, 200, 'paused', 0],
  ['pilot', { action: 'stop', reason: 'brown-outs' }, 200, 'stopped', 0],
  ['pilot', { action: 'withdraw', reason: 'superseded' }, 200, 'withdrawn', 0],
  ['pilot', { action: 'resume' }, 409, null, null],
  ['pilot', { action: 'start_pilot' }, 409, null, null],
  ['widening', { action: 'widen', share: 50 }, 200, 'widening', 50],
  ['widening', { action: 'widen', share: 25 }, 400, null, null],
  ['widening', { action: 'widen', share: 10 }, 400, null, null],
  ['widening', { action: 'complete' }, 200, 'complete', 100],
  ['widening', { action: 'pause' }, 200, 'paused', 25],
  ['widening', { action: 'stop' }, 400, null, null],
  ['widening', { action: 'withdraw' }, 400, null, null],
  ['complete', { action: 'pause' }, 200, 'paused', 100],
  ['complete', { action: 'stop', reason: 'field failures' }, 200, 'stopped', 100],
  ['complete', { action: 'withdraw', reason: 'recalled' }, 200, 'withdrawn', 100],
  ['complete', { action: 'widen', share: 50 }, 409, null, null],
  ['paused', { action: 'resume' }, 200, 'widening', 25],
  ['paused', { action: 'stop', reason: 'still failing' }, 200, 'stopped', 25],
  ['paused', { action: 'withdraw', reason: 'abandoned' }, 200, 'withdrawn', 25],
  ['paused', { action: 'pause' }, 409, null, null],
  ['stopped', { action: 'resume' }, 400, null, null],
  ['stopped', { action: 'resume', reason: 'fixed on the server side' }, 200, 'widening', 25],
  ['stopped', { action: 'withdraw', reason: 'bad build' }, 200, 'withdrawn', 25],
  ['stopped', { action: 'stop', reason: 'again' }, 409, null, null],
  ['withdrawn', { action: 'resume', reason: 'oops' }, 409, null, null],
  ['withdrawn', { action: 'start_pilot' }, 409, null, null],
];

describe('the lifecycle over the API', () => {
  test.each(table)('when a %s release gets %j, then %d', async (from, step, status, state, share) => {
    const release = await upload();
    for (const s of into[from]) expect((await act(release.id, s)).status).toBe(200);
    const transitionsBefore = await ReleaseTransition.count({ where: { releaseId: release.id } });
    const res = await act(release.id, step);
    expect(res.status).toBe(status);
    if (status === 200) {
      expect(res.body).toMatchObject({ state, share });
      expect(res.body.allowedActions).toEqual(allowed[state!]);
      // The engineer's can: the same lifecycle moves, retry always, edit and delete only while draft (never here).
      const open = Object.keys(res.body.can).filter((verb) => res.body.can[verb]);
      expect(open.sort()).toEqual([...allowed[state!], 'retry'].sort());
      expect(await ReleaseTransition.count({ where: { releaseId: release.id } })).toBe(transitionsBefore + 1);
    } else {
      expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
      expect(res.body.allowedActions).toEqual(allowed[from]);
      if (status === 400) expect(res.body.errors[0].path).toBe(step.action === 'widen' ? 'share' : 'reason');
      expect(await ReleaseTransition.count({ where: { releaseId: release.id } })).toBe(transitionsBefore);
      expect((await Release.findByPk(release.id))?.state).toBe(from);
    }
  });

  test('when a release moves, then each move is one history row and one activity row with who and why, and first-entry times are kept', async () => {
    const release = await upload();
    await act(release.id, { action: 'start_pilot' });
    const piloted = (await Release.findByPk(release.id))!.pilotedAt;
    expect(piloted).not.toBeNull();
    await act(release.id, { action: 'pause' });
    await act(release.id, { action: 'resume' });
    await act(release.id, { action: 'widen', share: 25 });
    const stopped = await act(release.id, { action: 'stop', reason: 'watchdog resets doubled' });
    expect(stopped.body.history.map((h: { action: string }) => h.action)).toEqual(['upload', 'start_pilot', 'pause', 'resume', 'widen', 'stop']);
    expect(stopped.body.history[5]).toMatchObject({ fromState: 'widening', toState: 'stopped', share: 25, reason: 'watchdog resets doubled', actorName: 'Priya Test' });
    const row = (await Release.findByPk(release.id))!;
    expect(row.pilotedAt?.getTime()).toBe(piloted?.getTime());
    expect(row.widenedAt).not.toBeNull();
    expect(row.stoppedAt).not.toBeNull();
    expect(row.completedAt).toBeNull();
    const activity = await Activity.findAll({ where: { targetType: 'release', targetId: release.id }, order: [['id', 'ASC']] });
    expect(activity.map((a) => a.action)).toEqual(['release.uploaded', 'release.pilot_started', 'release.paused', 'release.resumed', 'release.widened', 'release.stopped']);
    expect(activity[5].summary).toContain('watchdog resets doubled');
    expect(activity[5].actorName).toBe('Priya Test');
  });

  test('when a token with releases:write widens a release, then it may; an images:write token may not', async () => {
    const release = await upload();
    const admin = await t.signedIn('admin');
    const mk = async (scopes: string[]) => (await admin.post('/api/tokens').set(csrf).send({ name: `T ${scopes}`, scopes, expiresAt: '2099-01-01T00:00:00Z' })).body.token;
    const writer = await mk(['releases:write']);
    const uploader = await mk(['images:write']);
    expect((await request(t.app).post(`/api/releases/${release.id}/transitions`).set('Authorization', `Bearer ${uploader}`).send({ action: 'start_pilot' })).status).toBe(403);
    const res = await request(t.app).post(`/api/releases/${release.id}/transitions`).set('Authorization', `Bearer ${writer}`).send({ action: 'start_pilot' });
    expect(res.status).toBe(200);
    expect(res.body.history[1].actorName).toBe('T releases:write');
  });
});

describe('editing a draft', () => {
  test('when the targeting is edited, then boards stay within the manifest, ranges parse, pilot sites exist', async () => {
    const release = await upload({ boards: ['B', 'C'] });
    const agent = await engineer();
    const site = (await Site.findOne({ where: { name: 'Hollins Dairy' } }))!;
    const ok = await agent.patch(`/api/releases/${release.id}`).set(csrf).send({
      boards: ['C'], upgradeFrom: '>=2.0.0 <2.4.0', pilotSiteIds: [site.id], daylightWindow: true, tripFailureRatio: 0.1, tripMinReports: 10, tripResetFactor: 3, channel: 'early',
    });
    expect(ok.status).toBe(200);
    expect(ok.body).toMatchObject({ boards: ['C'], manifestBoards: ['B', 'C'], upgradeFrom: '>=2.0.0 <2.4.0', pilotSiteIds: [site.id], pilotSites: [{ id: site.id, name: 'Hollins Dairy' }], daylightWindow: true, tripFailureRatio: 0.1, tripMinReports: 10, tripResetFactor: 3, channel: 'early' });
    expect(await Activity.count({ where: { action: 'release.edited', targetId: release.id } })).toBe(1);

    const outside = await agent.patch(`/api/releases/${release.id}`).set(csrf).send({ boards: ['A', 'C'] });
    expect(outside.status).toBe(400);
    expect(outside.body.errors[0].path).toBe('boards');
    // semver package: validRange('not a range') is null.
    const range = await agent.patch(`/api/releases/${release.id}`).set(csrf).send({ upgradeFrom: 'not a range' });
    expect(range.status).toBe(400);
    expect(range.body.errors[0].path).toBe('upgradeFrom');
    const missingSite = await agent.patch(`/api/releases/${release.id}`).set(csrf).send({ pilotSiteIds: [crypto.randomUUID()] });
    expect(missingSite.status).toBe(400);
    expect(missingSite.body.errors[0].path).toBe('pilotSiteIds');
    const ratio = await agent.patch(`/api/releases/${release.id}`).set(csrf).send({ tripFailureRatio: 5 });
    expect(ratio.body.errors[0].path).toBe('tripFailureRatio');
    const cleared = await agent.patch(`/api/releases/${release.id}`).set(csrf).send({ upgradeFrom: null, pilotSiteIds: [] });
    expect(cleared.body).toMatchObject({ upgradeFrom: null, pilotSiteIds: [], boards: ['C'] });
  });

  test('when notes carry HTML, then notesHtml escapes it and renders only the small Markdown subset', async () => {
    const release = await upload();
    const notes = 'Fixes **brown-outs** on board B.\n\n<script>alert("x")</script>\n\n- faster check-ins\n- `supply_v` reported';
    const res = await (await engineer()).patch(`/api/releases/${release.id}`).set(csrf).send({ notes });
    expect(res.body.notes).toBe(notes);
    expect(res.body.notesHtml).not.toMatch(/<script/i);
    expect(res.body.notesHtml).toContain('&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt;');
    expect(res.body.notesHtml).toContain('<strong>brown-outs</strong>');
    expect(res.body.notesHtml).toContain('<ul><li>faster check-ins</li><li><code>supply_v</code> reported</li></ul>');
  });

  test('when the release has left draft, then PATCH and DELETE answer 409', async () => {
    const release = await upload();
    await act(release.id, { action: 'start_pilot' });
    const agent = await engineer();
    expect((await agent.patch(`/api/releases/${release.id}`).set(csrf).send({ notes: 'late' })).status).toBe(409);
    expect((await agent.delete(`/api/releases/${release.id}`).set(csrf)).status).toBe(409);
  });
});

describe('deleting a draft', () => {
  test('when a draft is deleted, then the version is free again and its image goes when no other release uses it', async () => {
    const shared = crypto.randomBytes(1024);
    const a = await upload({ version: '6.0.0', image: shared });
    const b = await upload({ version: '6.0.1', image: shared });
    const agent = await engineer();
    expect((await agent.delete(`/api/releases/${a.id}`).set(csrf)).status).toBe(204);
    expect(storeEntries(t)).toContain(b.image.sha256);
    expect((await agent.delete(`/api/releases/${b.id}`).set(csrf)).status).toBe(204);
    expect(storeEntries(t)).not.toContain(b.image.sha256);
    expect(fs.existsSync(path.join(t.storeDir, b.image.sha256))).toBe(false);
    const [{ n }] = await t.sequelize.query<{ n: number }>('SELECT count(*)::int AS n FROM images WHERE sha256 = :sha', { type: QueryTypes.SELECT, replacements: { sha: b.image.sha256 } });
    expect(n).toBe(0);
    expect(await Activity.count({ where: { action: 'release.deleted', targetId: [a.id, b.id] } })).toBe(2);
    const again = await upload({ version: '6.0.0', image: shared });
    expect(again.version).toBe('6.0.0');
    expect((await agent.get(`/api/releases/${a.id}`)).status).toBe(404);
  });
});

describe('reading releases', () => {
  test('when install reports exist, then the detail counts them by state and reason and the list shows installed and failed', async () => {
    const release = await upload();
    await act(release.id, { action: 'start_pilot' });
    const loggers = await Logger.findAll({ where: { modelId, status: 'enrolled' }, order: [['serial', 'ASC']], limit: 6 });
    const reports: [string, string | null][] = [['installed', null], ['installed', null], ['failed', 'integrity'], ['failed', null], ['downloading', null], ['offered', null]];
    for (const [i, [state, reason]] of reports.entries()) {
      await t.sequelize.query(
        `INSERT INTO install_reports (logger_id, release_id, state, reason, offered_at, updated_at) VALUES (:logger, :release, :state, :reason, now(), now())`,
        { replacements: { logger: loggers[i].id, release: release.id, state, reason } },
      );
    }
    const detail = await (await t.signedIn('support')).get(`/api/releases/${release.id}`);
    // PRODUCT.md roles: support reads releases and changes none.
    expect(Object.values(detail.body.can).every((may) => may === false)).toBe(true);
    expect(detail.status).toBe(200);
    expect(detail.body.counts).toEqual({
      offered: 1, downloading: 1, downloaded: 0, installing: 0, installed: 2, failed: 2,
      failedByReason: { integrity: 1, signature: 0, storage: 0, connection: 0, unsupported: 0, low_supply: 0, other: 1 },
    });
    const list = await (await t.signedIn('integrator')).get('/api/releases').query({ state: 'pilot' });
    expect(list.status).toBe(200);
    expect(list.body.rows.find((r: { id: string }) => r.id === release.id)).toMatchObject({ version: release.version, modelName: 'FL-2 field logger', state: 'pilot', share: 0, installed: 2, failed: 2, flagged: false });
    expect(list.body.rows.every((r: { state: string }) => r.state === 'pilot')).toBe(true);
    expect(list.body.total).toBe(list.body.rows.length);
    const bad = await (await t.signedIn('integrator')).get('/api/releases').query({ state: 'shipped' });
    expect(bad.status).toBe(400);
  });

  test('when a fleet:read token lists releases, then it may', async () => {
    const admin = await t.signedIn('admin');
    const token = (await admin.post('/api/tokens').set(csrf).send({ name: 'Dashboard', scopes: ['fleet:read'], expiresAt: '2099-01-01T00:00:00Z' })).body.token;
    const res = await request(t.app).get('/api/releases').set('Authorization', `Bearer ${token}`);
    expect(res.status).toBe(200);
    expect(res.body.total).toBeGreaterThan(0);
  });

  test('when the signing key is revoked, then its published releases are flagged and its drafts cannot start a pilot', async () => {
    const signer = keyPair('ecdsa-p256-sha256');
    const keyId = await registerKey(t, signer, 'Soon revoked');
    const published = await upload({ signer });
    await act(published.id, { action: 'start_pilot' });
    const draft = await upload({ signer });
    const admin = await t.signedIn('admin');
    expect((await admin.post(`/api/keys/${keyId}/revoke`).set(csrf)).status).toBe(200);
    const detail = await admin.get(`/api/releases/${published.id}`);
    expect(detail.body.flagged).toBe(true);
    expect(detail.body.key).toMatchObject({ state: 'revoked', keyId: signer.keyId });
    const row = (await admin.get('/api/releases')).body.rows.find((r: { id: string }) => r.id === published.id);
    expect(row.flagged).toBe(true);
    // The draft's answer already says so: it may be edited or deleted, not started.
    const draftView = await (await engineer()).get(`/api/releases/${draft.id}`);
    expect(draftView.body.can).toMatchObject({ start_pilot: false, edit: true, delete: true });
    const start = await act(draft.id, { action: 'start_pilot' });
    expect(start.status).toBe(409);
    expect(start.body.detail).toContain('revoked');
    const keys = await admin.get('/api/keys');
    expect(keys.body.rows.find((k: { id: string }) => k.id === keyId).releaseCount).toBe(2);
  });
});

describe('the rollout estimate', () => {
  test('when loggers of many kinds exist, then the estimate counts the older, enrolled ones of the channel and boards by the cohort bucket', async () => {
    const model = await LoggerModel.create({
      name: 'FL-2 estimate bench', boards: [{ label: 'A', note: '' }, { label: 'B', note: '' }], minUpdateSupplyV: 4.5, checkInIntervalS: 900,
      busVMax: 26, shuntFullScaleV: 0.08, tempResolutions: [9, 10, 11, 12],
    });
    const [pilotSite, otherSite] = await Promise.all([
      Site.create({ name: 'Estimate pilot site', latitude: null, longitude: null, createdBy: null }),
      Site.create({ name: 'Estimate other site', latitude: null, longitude: null, createdBy: null }),
    ]);
    const make = (n: number, extra: Partial<{ board: string; channel: 'stable' | 'early'; status: 'registered' | 'enrolled' | 'retired'; firmware: string | null; siteId: string; retiredAt: Date }>) =>
      Logger.bulkCreate(
        Array.from({ length: n }, () => ({
          serial: `EST-${crypto.randomBytes(5).toString('hex')}`, modelId: model.id, board: 'B', channel: 'stable' as const, status: 'enrolled' as const,
          tokenDigest: null, tokenIssuedAt: null, registeredBy: null, firmware: '2.0.0', siteId: otherSite.id, ...extra,
        })),
        { returning: true },
      );
    const eligible = await make(300, {});
    const pilots = await make(4, { siteId: pilotSite.id });
    await make(5, { board: 'A' }); // board not in the release
    await make(5, { channel: 'early' }); // other channel
    await make(5, { status: 'registered' }); // not enrolled
    await make(5, { status: 'retired', retiredAt: new Date() });
    await make(5, { firmware: '3.0.0' }); // already newer
    await make(5, { firmware: '2.1.0' }); // the same version
    await make(5, { firmware: null }); // running version unknown

    const signed = await upload({ version: '2.1.0', boards: ['B'], model: model.id });
    const agent = await engineer();
    await agent.patch(`/api/releases/${signed.id}`).set(csrf).send({ pilotSiteIds: [pilotSite.id] });

    // The SQL bucket equals bucketOf for every logger.
    const sqlBuckets = await t.sequelize.query<{ id: string; bucket: number }>(
      `SELECT l.id, (('x' || substr(encode(sha256((l.id::text || ':' || :releaseId)::bytea), 'hex'), 1, 8))::bit(32)::bigint % 10000)::int AS bucket FROM loggers l WHERE l.model_id = :modelId`,
      { type: QueryTypes.SELECT, replacements: { releaseId: signed.id, modelId: model.id } },
    );
    expect(sqlBuckets.length).toBeGreaterThan(300);
    for (const row of sqlBuckets) expect(row.bucket).toBe(bucketOf(row.id, signed.id));

    const expected = (share: number) => pilots.length + eligible.filter((l) => bucketOf(l.id, signed.id) < share * 100).length;
    const now = await agent.get(`/api/releases/${signed.id}/estimate`).query({ share: 25 });
    expect(now.status).toBe(200);
    expect(now.body).toEqual({ share: 25, eligibleNow: pilots.length, eligibleAtShare: expected(25), more: expected(25) - pilots.length });
    // Share 25 % of 300 loggers: the count is binomial around 75, far from 0 and 300.
    expect(now.body.eligibleAtShare).toBeGreaterThan(pilots.length + 30);
    expect(now.body.eligibleAtShare).toBeLessThan(pilots.length + 130);

    await act(signed.id, { action: 'start_pilot' });
    await act(signed.id, { action: 'widen', share: 25 });
    const wider = await agent.get(`/api/releases/${signed.id}/estimate`).query({ share: 50 });
    expect(wider.body).toEqual({ share: 50, eligibleNow: expected(25), eligibleAtShare: expected(50), more: expected(50) - expected(25) });
    const all = await agent.get(`/api/releases/${signed.id}/estimate`).query({ share: 100 });
    expect(all.body.eligibleAtShare).toBe(eligible.length + pilots.length);
    expect((await agent.get(`/api/releases/${signed.id}/estimate`).query({ share: 101 })).status).toBe(400);
  });
});
