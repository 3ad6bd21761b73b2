// Migration 0007 (Heliodor's own release words) is reversible: on the full demo, `down` gives every
// state, transition, column and activity code its earlier word, and `up` again restores the rows
// exactly as they were. The earlier words appear here only as the data `down` must produce.
import type { Transaction } from 'sequelize';
import { QueryTypes } from 'sequelize';
import { startTestApp, type TestApp } from '../helpers/app';
import * as m0007 from '../../server/db/migrations/0007_own_words';

let t: TestApp;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo', seedSize: 'full' });
}, 120_000);
afterAll(() => t.close());

const q = <T extends object>(sql: string) => t.sequelize.query<T>(sql, { type: QueryTypes.SELECT });

async function snapshot() {
  return {
    releases: await q('SELECT id, state, resume_state, share FROM releases ORDER BY id'),
    transitions: await q('SELECT id, action, from_state, to_state FROM release_transitions ORDER BY id'),
    activity: await q("SELECT id, action, details FROM activity WHERE target_type = 'release' ORDER BY id"),
    loggerChannels: await q('SELECT id, channel FROM loggers ORDER BY id'),
    stops: await q('SELECT id, stopped_by, trip_figures FROM releases ORDER BY id'),
  };
}

/**
 * Runs 0007 by itself with the later migrations' triggers held off (PostgreSQL's session_replication_role
 * = replica fires no ordinary trigger): those triggers keep derived rows in today's words, and 0007 rolled
 * back alone would hand them yesterday's; what is checked here is 0007's own renaming of the rows.
 */
async function alone(tx: Transaction, work: () => Promise<void>) {
  await t.sequelize.query('SET LOCAL session_replication_role = replica', { transaction: tx });
  await work();
}

describe('migration 0007, our own words', () => {
  test('when it is rolled back and applied again, then the earlier words come back and then every row is as it was', async () => {
    const before = await snapshot();
    // The demo has a release stopped by a person (3.0.0-beta.1) and several that widened.
    expect(before.releases.some((r) => (r as { state: string }).state === 'stopped')).toBe(true);

    await t.sequelize.transaction((tx) => alone(tx, () => m0007.down(t.sequelize, tx)));
    const states = (await q<{ state: string }>('SELECT DISTINCT state FROM releases')).map((r) => r.state).sort();
    expect(states).toEqual(expect.arrayContaining(['halted']));
    expect(states).not.toContain('stopped');
    const actions = (await q<{ action: string }>('SELECT DISTINCT action FROM release_transitions')).map((r) => r.action);
    expect(actions).toEqual(expect.arrayContaining(['expand', 'halt']));
    const codes = (await q<{ action: string }>("SELECT DISTINCT action FROM activity WHERE target_type = 'release'")).map((r) => r.action);
    expect(codes).toEqual(expect.arrayContaining(['release.start_pilot', 'release.expand', 'release.halt']));
    const columns = (await q<{ column_name: string }>("SELECT column_name FROM information_schema.columns WHERE table_name = 'releases'")).map((c) => c.column_name);
    expect(columns).toEqual(expect.arrayContaining(['track', 'halt_failure_ratio', 'expanded_at', 'halted_at']));
    expect(columns).not.toContain('stopped_by');

    await t.sequelize.transaction((tx) => alone(tx, () => m0007.up(t.sequelize, tx)));
    const after = await snapshot();
    expect(after.releases).toEqual(before.releases);
    expect(after.transitions).toEqual(before.transitions);
    expect(after.activity).toEqual(before.activity);
    expect(after.loggerChannels).toEqual(before.loggerChannels);
    expect(after.stops).toEqual(before.stops);
  }, 60_000);
});
