// The README's trip command against the full demo scenario `npm start` seeds: the simulator registers
// loggers at the pilot sites of 3.0.0-rc.1 (early channel, boards B and C, no daylight window), a share of
// their installs fail, and the release trips by itself — at any hour, since the pilot has no daylight
// window. Sources: DEVICE_API.md rules 2–3 (a pilot release is offered at its pilot sites, on its channel)
// and "Trip" (more than tripFailureRatio of at least tripMinReports finished installs failed: 5 % of 20
// for the demo's releases, PRODUCT.md's trip points).
import { QueryTypes } from 'sequelize';
import { startTestApp, testPassword, type TestApp } from '../helpers/app';
import { simulate as runSimulator } from '../helpers/simulate';

let t: TestApp;
let baseUrl: string;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo', seedSize: 'full' });
  baseUrl = await t.listen();
});
afterAll(() => t.close());

const simulate = (args: string[]) => runSimulator(args, { env: { HELIODOR_DATA: t.dataDir, HELIODOR_SIM_PASSWORD: testPassword }, timeoutMs: 120_000 });

test('when the README trip command runs against the full demo, then 3.0.0-rc.1 trips in its pilot and the simulator exits 0', async () => {
  const before = await t.sequelize.query<{ state: string }>("SELECT state FROM releases WHERE version = '3.0.0-rc.1'", { type: QueryTypes.SELECT });
  expect(before).toEqual([{ state: 'pilot' }]);
  // README: npm run simulate -- --register --pilot-of 3.0.0-rc.1 --loggers 40 --fail-rate 0.3 --minutes 2
  // (shorter here, and faster: every logger checks in within its first simulated minute).
  const run = await simulate(['--url', baseUrl, '--register', '--pilot-of', '3.0.0-rc.1', '--loggers', '40', '--fail-rate', '0.3', '--minutes', '0.5', '--speed', '120']);
  expect(run.stderr).toContain('at the 2 pilot sites of 3.0.0-rc.1 (early channel, boards B, C)');
  expect(run.code).toBe(0);
  const [after] = await t.sequelize.query<{ state: string; stopped_by: string; reason: string }>(
    `SELECT r.state, r.stopped_by, rt.reason FROM releases r JOIN release_transitions rt ON rt.release_id = r.id AND rt.action = 'stop'
      WHERE r.version = '3.0.0-rc.1'`,
    { type: QueryTypes.SELECT },
  );
  expect(after).toMatchObject({ state: 'stopped', stopped_by: 'trip' });
  expect(after.reason).toMatch(/^Trip: \d+ of \d+ finished installs failed/);
}, 180_000);
