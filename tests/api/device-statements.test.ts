// How much a quiet check-in asks of the database (DEVELOPERS.md, "Growing past one machine": a
// check-in needs one indexed read and one write). A quiet check-in brings no install report, is
// offered nothing and already runs its measurement profile; counted here are the SQL statements the
// app's own Sequelize sends for it (Sequelize's `logging` hook sees every statement), besides the
// transaction's BEGIN and COMMIT.
import { QueryTypes } from 'sequelize';
import { bearer, CHECK_IN, checkInBody, fleetApp } from './device-fixtures';

const app = fleetApp();

/** The statements sent while `work` runs, as Sequelize logs them. */
async function statementsDuring(work: () => Promise<unknown>): Promise<string[]> {
  const options = (app.t.sequelize as unknown as { options: { logging?: unknown } }).options;
  const before = options.logging;
  const seen: string[] = [];
  options.logging = (line: string) => seen.push(line.replace(/^Executing \([^)]*\): /, ''));
  try {
    await work();
  } finally {
    options.logging = before;
  }
  return seen;
}

const isTransactionControl = (sql: string) => /^(START TRANSACTION|BEGIN|COMMIT|ROLLBACK)\b/i.test(sql.trim());

test('when a logger checks in quietly (no report, nothing to offer, profile current), then at most 3 SQL statements run besides BEGIN and COMMIT', async () => {
  // The only release is older than what the logger runs: nothing to offer.
  await app.fleet.release({ version: '2.3.0' });
  const lg = await app.fleet.logger();
  const quiet = () => app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('2.3.1', { config_version: 1 })).expect(200);
  await quiet(); // the release cache is filled by the first check-in of the model

  let reply: { body: { offer: unknown; config: unknown } } | null = null;
  const sql = await statementsDuring(async () => {
    reply = await quiet();
  });
  expect(reply!.body).toMatchObject({ offer: null, config: null });
  const work = sql.filter((s) => !isTransactionControl(s));
  expect(sql.filter(isTransactionControl).map((s) => /^\w+/.exec(s.trim())![0].toUpperCase())).toEqual(['START', 'COMMIT']);
  expect(work.length).toBeLessThanOrEqual(3);
  // Nothing was skipped to get there: both check-ins left their history row.
  const [{ n }] = await app.t.sequelize.query<{ n: number }>('SELECT count(*)::int AS n FROM check_ins WHERE logger_id = :id', {
    type: QueryTypes.SELECT,
    replacements: { id: lg.id },
  });
  expect(n).toBe(2);
});
