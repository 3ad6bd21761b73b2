// The README's threshold demo (`npm run simulate -- --demo-threshold`) against the small demo: three keys,
// a model whose rule becomes 2 of 3, a pilot refused with one signature and started with two, and loggers
// that take trust set version 2 and install only after two signatures by distinct keys of it verify.
// Sources: TUF (docs/SOURCES.md §6): a threshold of distinct keys signs each role, a key counts once, and
// a client steps to the next trust set only when the threshold of its current set signed it;
// DEVICE_API.md "Signatures" and "Trust sets".
import { QueryTypes } from 'sequelize';
import { startTestApp, testPassword, type TestApp } from '../helpers/app';
import { simulate as runSimulator } from '../helpers/simulate';

let t: TestApp;
let baseUrl: string;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
  baseUrl = await t.listen();
});
afterAll(() => t.close());

const simulate = (args: string[]) => runSimulator(args, { env: { HELIODOR_DATA: t.dataDir, HELIODOR_SIM_PASSWORD: testPassword }, timeoutMs: 60_000 });

test('when the threshold demo runs, then the pilot is refused with one signature, starts with two, and every logger verifies both against trust set version 2 and installs', async () => {
  // README: npm run simulate -- --demo-threshold
  const run = await simulate(['--url', baseUrl, '--demo-threshold', '--loggers', '3']);
  expect(run.code).toBe(0);
  expect(run.stdout).toContain('signing rule 2 of 3 registered keys');
  // RFC 9110 §15.5.10: 409 Conflict, the release's state (one signature) conflicts with the request.
  expect(run.stdout).toContain('one signature  pilot refused: 409 Conflict: The pilot needs signatures by 2 distinct registered keys that are not revoked; this release has 1.');
  expect(run.stdout).toContain('Every logger verified two signatures against its trust set and installed 1.1.0.');
  expect(run.stdout.match(/verified {3}yes: signatures by key 1 and key 2, 2 needed by its trust set/g)).toHaveLength(3);
  expect(run.stdout.match(/trust set {2}version 2 accepted \(signed by key 1\)/g)).toHaveLength(3);
  expect(run.stdout.match(/install {4}installed 1\.1\.0/g)).toHaveLength(3);

  // What the server holds: the release in pilot with two signatures, and three installed reports.
  const [release] = await t.sequelize.query<{ state: string; signatures: number; installed: number }>(
    `SELECT r.state, (SELECT count(*)::int FROM release_signatures s WHERE s.release_id = r.id) AS signatures,
            (SELECT count(*)::int FROM install_reports ir WHERE ir.release_id = r.id AND ir.state = 'installed') AS installed
       FROM releases r JOIN models m ON m.id = r.model_id WHERE m.name LIKE 'FL-2T threshold demo %'`,
    { type: QueryTypes.SELECT },
  );
  expect(release).toEqual({ state: 'pilot', signatures: 2, installed: 3 });
}, 90_000);
