// Trip under concurrent install reports (PRODUCT.md journey 4, "a bad release trips by itself"): 50 loggers report failed at once; the
// release stops exactly once, one e-mail goes out, every report is counted. Threshold figures: the
// release's own tripFailureRatio (5 %) and tripMinReports (20), as DEVICE_API.md's releases carry them.
import { QueryTypes } from 'sequelize';
import { bearer, CHECK_IN, checkInBody, fleetApp } from './device-fixtures';

const app = fleetApp();


async function one<T extends object>(sql: string, replacements: Record<string, unknown>): Promise<T> {
  const [row] = await app.t.sequelize.query<T>(sql, { type: QueryTypes.SELECT, replacements });
  return row!;
}

describe('trip', () => {
  test('when 50 loggers report a failed install at the same moment, then the release stops once, one e-mail is sent and all 50 failures are counted', async () => {
    await app.t.signedIn('admin', 'Morgan Stop Admin');
    await app.t.signedIn('release_engineer', 'Priya Stop Engineer');
    const release = await app.fleet.release({ version: '7.0.0', tripFailureRatio: 0.05, tripMinReports: 20 });
    const loggers = await Promise.all(Array.from({ length: 50 }, () => app.fleet.logger()));
    for (const lg of loggers) {
      const res = await app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('6.9.0'));
      expect(res.body.offer?.release).toBe(release.id);
    }

    const replies = await Promise.all(
      loggers.map((lg) =>
        app.t
          .request()
          .post(CHECK_IN)
          .set(bearer(lg.token))
          .send(checkInBody('6.9.0', { report: { release: release.id, state: 'failed', reason: 'integrity', detail: 'image digest mismatch after download' } })),
      ),
    );
    expect(replies.map((r) => r.status)).toEqual(loggers.map(() => 200));
    // A stopped release offers nothing, from the check-in that stopped it on.
    expect(replies.every((r) => r.body.offer === null)).toBe(true);

    const state = await one<{ state: string; resume_state: string; stopped_at: Date | null }>('SELECT state, resume_state, stopped_at FROM releases WHERE id = :id', { id: release.id });
    expect(state).toMatchObject({ state: 'stopped', resume_state: 'complete' });
    expect(state.stopped_at).not.toBeNull();
    const counts = await one<{ failed: number; total: number }>(
      `SELECT count(*) FILTER (WHERE state = 'failed' AND reason = 'integrity')::int AS failed, count(*)::int AS total FROM install_reports WHERE release_id = :id`,
      { id: release.id },
    );
    expect(counts).toEqual({ failed: 50, total: 50 });
    const transitions = await app.t.sequelize.query<{ action: string; actor_type: string; actor_name: string; from_state: string; to_state: string; reason: string }>(
      'SELECT action, actor_type, actor_name, from_state, to_state, reason FROM release_transitions WHERE release_id = :id',
      { type: QueryTypes.SELECT, replacements: { id: release.id } },
    );
    expect(transitions).toHaveLength(1);
    expect(transitions[0]).toMatchObject({ action: 'stop', actor_type: 'system', actor_name: 'system', from_state: 'complete', to_state: 'stopped' });
    // The stop happened at the 20th finished install: 20 of 20 failed, 100 % > 5 %.
    expect(transitions[0].reason).toContain('20 of 20 finished installs failed (100 %)');
    const activity = await app.t.sequelize.query<{ actor_type: string; summary: string }>(
      `SELECT actor_type, summary FROM activity WHERE action = 'release.stopped' AND target_id = :id`,
      { type: QueryTypes.SELECT, replacements: { id: release.id } },
    );
    expect(activity).toHaveLength(1);
    expect(activity[0].actor_type).toBe('system');

    const admin = await app.t.signedIn('admin', 'Morgan Stop Admin');
    // 20 of 20 finished installs failed: 100 % against the release's trip point of 5 %.
    const subject = `Release 7.0.0 of ${app.fleet.model.name} tripped: 100 % of installs failed (trip point 5 %)`;
    let mails: { to: string[]; subject: string; text: string }[] = [];
    for (let i = 0; i < 50; i++) {
      const res = await admin.get('/api/dev/outbox');
      mails = (res.body as { to: string[]; subject: string; text: string }[]).filter((m) => m.subject === subject);
      if (mails.length > 0) break;
      await new Promise((r) => setTimeout(r, 100));
    }
    await new Promise((r) => setTimeout(r, 300)); // a second e-mail, if any, would have arrived by now
    mails = ((await admin.get('/api/dev/outbox')).body as typeof mails).filter((m) => m.subject === subject);
    expect(mails).toHaveLength(1);
    expect(mails[0].to).toEqual(expect.arrayContaining(['morgan.stop.admin@test.example', 'priya.stop.engineer@test.example']));
    expect(mails[0].text).toContain('20 of 20 finished installs failed');
  });

  test('when installs fail only for transient reasons, then the release keeps going', async () => {
    const release = await app.fleet.release({ version: '8.0.0', boards: ['C'], tripFailureRatio: 0.05, tripMinReports: 5 });
    const loggers = await Promise.all(Array.from({ length: 10 }, () => app.fleet.logger({ board: 'C' })));
    for (const lg of loggers) {
      await app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('7.9.0', { board: 'C' })).expect(200);
    }
    const replies = await Promise.all(
      loggers.map((lg, i) =>
        app.t
          .request()
          .post(CHECK_IN)
          .set(bearer(lg.token))
          .send(checkInBody('7.9.0', { board: 'C', report: { release: release.id, state: 'failed', reason: i % 2 ? 'connection' : 'low_supply' } })),
      ),
    );
    expect(replies.every((r) => r.status === 200 && r.body.offer?.release === release.id)).toBe(true);
    expect((await one<{ state: string }>('SELECT state FROM releases WHERE id = :id', { id: release.id })).state).toBe('complete');
  });

  test('when failures stay at the threshold over the minimum, then no stop; one more failure crosses it', async () => {
    // 1 failure in 20 finished installs is exactly 5 %: not above the threshold.
    const release = await app.fleet.release({ version: '9.0.0', boards: ['A'], tripFailureRatio: 0.05, tripMinReports: 20 });
    const loggers = await Promise.all(Array.from({ length: 21 }, () => app.fleet.logger({ board: 'A' })));
    const report = (lg: { token: string }, state: string, reason?: string) =>
      app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('8.9.0', { board: 'A', report: { release: release.id, state, ...(reason ? { reason } : {}) } }));
    for (const lg of loggers) await app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('8.9.0', { board: 'A' })).expect(200);
    await report(loggers[0], 'failed', 'storage');
    for (const lg of loggers.slice(1, 20)) await report(lg, 'installed');
    expect((await one<{ state: string }>('SELECT state FROM releases WHERE id = :id', { id: release.id })).state).toBe('complete');
    // 2 of 21 = 9.5 % > 5 %.
    await report(loggers[20], 'failed', 'other');
    expect((await one<{ state: string }>('SELECT state FROM releases WHERE id = :id', { id: release.id })).state).toBe('stopped');
  });
});

// Which check-ins lock the release row (server/device-api/checkin.ts, step 2): only those whose writes
// change the figures the trip rules read. PostgreSQL reports a backend blocked on a row lock with
// wait_event_type 'Lock' in pg_stat_activity (PostgreSQL documentation, "Wait Event Types").
describe('the release lock', () => {
  const waitingOnLocks = async () =>
    (await one<{ n: number }>(`SELECT count(*)::int AS n FROM pg_stat_activity WHERE datname = current_database() AND wait_event_type = 'Lock'`, {})).n;

  /** Whether the request is answered before any backend of this database waits on a lock. */
  async function answeredOrWaiting(request: PromiseLike<{ status: number }>): Promise<'answered' | 'waiting'> {
    let answered = false;
    void Promise.resolve(request).then(() => (answered = true), () => (answered = true));
    for (;;) {
      if (answered) return 'answered';
      if ((await waitingOnLocks()) > 0) return answered ? 'answered' : 'waiting';
      await new Promise((r) => setTimeout(r, 20));
    }
  }

  test('when another transaction holds the release, then a check-in that changes no figures answers, and one that fails an install waits for it', async () => {
    const release = await app.fleet.release({ version: '9.1.0', tripFailureRatio: 0.5, tripMinReports: 20 });
    const [steady, failing] = await Promise.all([app.fleet.logger(), app.fleet.logger()]);
    const checkIn = (lg: { token: string }, extra: Record<string, unknown> = {}) => app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('9.0.0', extra));
    const downloading = { report: { release: release.id, state: 'downloading' } };
    for (const lg of [steady, failing]) {
      expect((await checkIn(lg)).body.offer?.release).toBe(release.id);
      expect((await checkIn(lg, downloading)).status).toBe(200);
    }

    const hold = await app.t.sequelize.transaction();
    let failed: Promise<{ status: number }> | null = null;
    try {
      await app.t.sequelize.query('SELECT id FROM releases WHERE id = :id FOR UPDATE', { transaction: hold, replacements: { id: release.id } });
      // Still downloading: nothing the trip rules count changed, so nothing waits for the release.
      const steadyAnswer = checkIn(steady, downloading).then((r) => r);
      expect(await answeredOrWaiting(steadyAnswer)).toBe('answered');
      expect((await steadyAnswer).status).toBe(200);
      // A failed install changes the failure figures: that check-in waits until the release is free.
      failed = checkIn(failing, { report: { release: release.id, state: 'failed', reason: 'integrity' } }).then((r) => r);
      expect(await answeredOrWaiting(failed)).toBe('waiting');
    } finally {
      await hold.rollback();
    }
    expect((await failed!).status).toBe(200);
    const report = await one<{ state: string }>('SELECT state FROM install_reports WHERE release_id = :id AND logger_id = :logger', { id: release.id, logger: failing.id });
    expect(report.state).toBe('failed');
  });
});
