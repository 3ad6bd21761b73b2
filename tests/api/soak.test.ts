// The fast variant of `npm run test:soak` (tests/soak/rollout.ts, the same code): 200 of the
// simulator's virtual loggers (scripts/simulator/logger.ts, the reference client of DEVICE_API.md)
// through a release's pilot → widen 25 % → complete, 3 % of installs failing, and a 5 s database
// outage while the widening is under way. Here the outage is the relay kind (the test cluster is
// shared with other test files, so it cannot be stopped): every connection between Heliodor and
// PostgreSQL is reset and new ones are refused for 5 s. The long run stops PostgreSQL itself.
//
// The checks are against the loggers' own ledger of what the server acknowledged (a check-in answered
// 200, the install report it carried) and against HTTP itself: during the outage the only 5xx allowed
// is 503 with Retry-After (RFC 9110 §15.6.4: "temporarily overloaded or down for maintenance", and
// §10.2.3 Retry-After, which DEVICE_API.md promises loggers), and every install report is applied
// once (DEVICE_API.md: "a retried check-in never double-counts"). Sources: docs/SOURCES.md §20.
import { runRolloutSoak, summaryTable, type SoakReport } from '../soak/rollout';

let report: SoakReport;

beforeAll(async () => {
  report = await runRolloutSoak({
    loggers: 200,
    speed: 180,
    outageS: 5,
    failRate: 0.03,
    interruptRate: 0.05,
    seed: 20261202,
    concurrency: 24,
    stallS: 60,
    outageKind: 'relay',
    log: (line) => process.stderr.write(`[soak] ${line}\n`),
  });
  // The same table `npm run test:soak` prints, for whoever reads the test log.
  process.stdout.write(summaryTable(report));
}, 900_000); // a ceiling for a busy machine, not a timing check: the soak gives up itself when nothing moves (stallS)

describe('the fast soak: 200 loggers through a rollout with a 5 s database outage', () => {
  test('when the rollout has run through the outage, then nothing the server acknowledged is missing from the database and nothing is counted twice', () => {
    expect(report.lost).toEqual([]);
    expect(report.countedTwice).toEqual([]);
    expect(report.database.checkInRows).toBe(report.ledger.checkIns);
    expect(report.database.installed).toBe(report.ledger.installed);
    expect(report.database.failed).toBe(report.ledger.failed);
  });

  test('when the database was away, then the loggers were answered 503 with Retry-After and never another 5xx', () => {
    const during = report.answers.outage.checkIns;
    expect(during['503 + Retry-After'] ?? 0).toBeGreaterThan(0);
    expect(report.badAnswers).toEqual([]);
    const statuses = Object.values(report.answers).flatMap((p) => [...Object.keys(p.checkIns), ...Object.keys(p.images)]);
    expect(statuses.filter((s) => s.startsWith('5') && s !== '503 + Retry-After')).toEqual([]);
  });

  test('when the rollout is complete, then every logger runs the new version with its install confirmed, or failed for good with a reason the simulator injects', () => {
    expect(report.unfinished).toEqual([]);
    expect(report.database.confirmed + report.database.failed).toBe(200);
    // The simulator fails installs with integrity, storage or other (scripts/simulator/logger.ts).
    for (const reason of Object.keys(report.ledger.failedByReason)) expect(['integrity', 'storage', 'other']).toContain(reason);
    expect(report.problems).toEqual([]);
  });
});
