// `npm run test:soak`: the long soak, minutes, not part of `npm test` or CI (DEVELOPERS.md, "The soak").
//
//   npm run test:soak                              2 000 loggers, 15 s outage, 10 000 malformed requests
//   npm run test:soak -- --loggers 500 --outage 5  a smaller run
//
// It prints a summary table and exits 1 on anything lost or counted twice, a 5xx other than 503 (or a
// 503 without Retry-After), a logger that never finished, or a malformed request answered with a 5xx.
import { parseArgs } from 'node:util';
import { SOAK_PASSWORD } from './environment';
import { malformedCases, malformedSummary, sendMalformed, type MalformedResult } from './malformed';
import { runRolloutSoak, summaryTable } from './rollout';

const { values: args } = parseArgs({
  options: {
    loggers: { type: 'string', default: '2000' },
    outage: { type: 'string', default: '15' },
    speed: { type: 'string', default: '30' },
    'fail-rate': { type: 'string', default: '0.03' },
    seed: { type: 'string', default: '20261202' },
    concurrency: { type: 'string', default: '32' },
    malformed: { type: 'string', default: '10000' },
  },
  strict: true,
});

const number = (name: string, value: string | undefined, min: number, max: number) => {
  const n = Number(value);
  if (!Number.isFinite(n) || n < min || n > max) throw new Error(`--${name} must be a number from ${min} to ${max}`);
  return n;
};

async function main(): Promise<number> {
  const log = (line: string) => process.stdout.write(`[soak] ${line}\n`);
  const loggers = number('loggers', args.loggers, 10, 5000);
  const speed = number('speed', args.speed, 1, 600);
  const seed = number('seed', args.seed, 0, 2 ** 32 - 1);
  const count = number('malformed', args.malformed, 0, 1_000_000);
  let malformed: MalformedResult | null = null;
  const report = await runRolloutSoak(
    {
      loggers,
      speed,
      outageS: number('outage', args.outage, 1, 600),
      failRate: number('fail-rate', args['fail-rate'], 0, 0.5),
      interruptRate: 0.05,
      seed,
      concurrency: number('concurrency', args.concurrency, 1, 256),
      // Four check-in intervals at the longest the server may stretch them (4 ×), at least two minutes.
      stallS: Math.max(120, (4 * 4 * 900) / speed),
      outageKind: 'pg_ctl',
      log,
    },
    // The malformed requests go to the same server process after the rollout, so its memory is
    // sampled through them and a crash would show as the process ending.
    count > 0
      ? async (server, targets) => {
          log(`${count} malformed requests over raw sockets to ${server.base}`);
          const signIn = await fetch(`${server.base}/api/auth/sign-in`, {
            method: 'POST',
            headers: { 'Content-Type': 'application/json', 'X-Requested-With': 'heliodor' },
            body: JSON.stringify({ email: 'morgan@fernhollow.example', password: SOAK_PASSWORD }),
          });
          const cookie = signIn.headers.getSetCookie().map((c) => c.split(';')[0]).join('; ');
          malformed = await sendMalformed(server.base, malformedCases(count, seed, { ...targets, cookie }));
        }
      : undefined,
  );
  process.stdout.write(summaryTable(report));
  let failed = report.problems.length > 0;
  if (malformed) {
    const m = malformed as MalformedResult;
    process.stdout.write(malformedSummary({ ...m, seed }));
    failed ||= m.problems.length > 0;
  }
  process.stdout.write(failed ? 'Soak FAILED\n' : 'Soak passed: nothing lost, nothing counted twice, no 5xx but 503 with Retry-After\n');
  return failed ? 1 : 0;
}

main().then(
  (code) => process.exit(code),
  (error: unknown) => {
    process.stderr.write(`soak: ${error instanceof Error ? error.stack ?? error.message : String(error)}\n`);
    process.exit(1);
  },
);
