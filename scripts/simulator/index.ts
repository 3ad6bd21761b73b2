// `npm run simulate -- --loggers 500 --minutes 10 --speed 60 …`: a fleet of virtual loggers checking
// in with a running Heliodor, taking the offers it makes, and reporting how their installs went.
// Wiring only: the loggers live in ./logger.ts, the fleet in ./fleet.ts.
import fs from 'node:fs';
import path from 'node:path';
import { Command, InvalidArgumentError, Option } from 'commander';
import { ManifestError } from '../../server/images/manifest';
import type { LoggerIdentity } from './logger';
import { acceleratedClock, buildFleet, SetupError, ConsoleSession, firmwareByBoard, firmwareOnRecord, FleetTally, loadTrustedKeys, pilotTarget, readBenchSheet, registerFleet, runFleet } from './fleet';
import { seededRandom } from './random';
import { runThresholdDemo, thresholdSummary } from './threshold-demo';
import { runDriftDemo } from './drift-demo';

const MAX_LOGGERS = 5000;
const MAX_MINUTES = 24 * 60;

function number(name: string, min: number, max: number, integer = false) {
  return (value: string) => {
    const n = Number(value);
    if (!Number.isFinite(n) || n < min || n > max || (integer && !Number.isInteger(n))) {
      throw new InvalidArgumentError(`${name} must be ${integer ? 'a whole number' : 'a number'} from ${min} to ${max}`);
    }
    return n;
  };
}

type Options = {
  url: string;
  loggers: number;
  minutes: number;
  speed: number;
  benchSheet?: string;
  register: boolean;
  email: string;
  password?: string;
  model?: string;
  earlyShare: number;
  pilotOf?: string;
  keys?: string;
  firmware: string;
  counter: number;
  failRate: number;
  interruptRate: number;
  seed: number;
  concurrency: number;
  start?: string;
  drift: number;
  /** A self-contained drift run of this many simulated days (its own Heliodor, a stepped clock). */
  days?: number;
  demoThreshold: boolean;
  /** Whether --loggers was given (the threshold demo takes a handful by default). */
  loggersGiven?: boolean;
};

const dataDir = path.resolve(process.env.HELIODOR_DATA ?? '.data');

function buildProgram(run: (o: Options) => Promise<number>): Command {
  return new Command('simulate')
    .description('Heliodor fleet simulator: virtual loggers that check in, take offers, download, verify, install and report')
    .showHelpAfterError('(run with --help for usage)')
    .option('--url <origin>', 'the Heliodor server; all traffic goes there and nowhere else', 'http://127.0.0.1:8080')
    .option('--loggers <n>', `how many loggers (1–${MAX_LOGGERS})`, number('--loggers', 1, MAX_LOGGERS, true), 50)
    .option('--minutes <n>', `how long to run, in real minutes (up to ${MAX_MINUTES})`, number('--minutes', 0.05, MAX_MINUTES), 10)
    .option('--speed <n>', 'simulated seconds per real second', number('--speed', 1, 3600), 60)
    .option('--bench-sheet <file>', `take tokens from a bench sheet (default: ${path.join(dataDir, 'demo', 'bench-sheet.csv')})`)
    .option('--register', 'register and enroll new loggers through the console API instead (needs an admin sign-in)', false)
    .option('--email <email>', 'admin e-mail for --register', process.env.HELIODOR_SIM_EMAIL ?? 'morgan@fernhollow.example')
    .option('--password <password>', 'admin password for --register (default: $HELIODOR_SIM_PASSWORD, else the demo password)')
    .option('--model <name-or-id>', 'model of the loggers to register (--register)')
    .option('--early-share <share>', 'share of registered loggers on the early channel, 0–1 (--register)', number('--early-share', 0, 1), 0)
    .option('--pilot-of <version>', "register the loggers at this release's pilot sites, on its channel and with its board revisions, so it is offered to them (--register)")
    .option('--keys <dir>', `folder of trusted public-key PEMs; private keys in it are skipped (default: ${path.join(dataDir, 'demo')}, where the demo seed writes its key)`)
    .option('--firmware <spec>', 'version the loggers run at the start, per board or for all; "console" reads each logger\'s recorded version (admin sign-in)', 'A=2.1.4,B=2.2.0,C=2.2.0')
    .option('--counter <n>', 'security counter the loggers start with', number('--counter', 0, Number.MAX_SAFE_INTEGER, true), 0)
    .option('--fail-rate <share>', 'share of installs that fail (reason integrity, storage or other), 0–1', number('--fail-rate', 0, 1), 0)
    .option('--interrupt-rate <share>', 'share of download attempts cut short, 0–1', number('--interrupt-rate', 0, 0.95), 0.1)
    .option('--seed <n>', 'seed for readings, faults and failures (same seed, same run)', number('--seed', 0, 2 ** 32 - 1, true), 1)
    .addOption(new Option('--concurrency <n>', 'loggers talking to the server at once').argParser(number('--concurrency', 1, 256, true)).default(32))
    .option('--start <time>', 'simulated start time, RFC 3339 (default: now)')
    .option('--drift <scale>', 'measurement drift: loggers that install an offered release report their current (and power and energy) × this, as a broken calibration would (1: none)', number('--drift', 0, 100), 1)
    .option('--days <n>', 'a self-contained drift run: start an own Heliodor in this process on a scratch database in a throwaway PostgreSQL, step its clock through this many simulated UTC days (4 or more: a day before, the install day, a whole day after, the trip) and show day by day how the release the loggers install with --drift trips (20 loggers unless --loggers, --start picks the first day; no server needed)', number('--days', 4, 60, true))
    .option('--demo-threshold', 'show a release that needs 2 signatures going out: three keys, a model with the rule 2 of the keys, a pilot refused with one signature and started with two, loggers verifying both and installing (admin sign-in; 6 loggers unless --loggers)', false)
    .action(async (options: Options, command: Command) => {
      process.exitCode = await run({ ...options, loggersGiven: command.getOptionValueSource('loggers') === 'cli' });
    });
}

async function adminSession(o: Options): Promise<ConsoleSession> {
  const session = new ConsoleSession(o.url);
  await session.signIn(o.email, o.password ?? process.env.HELIODOR_SIM_PASSWORD ?? process.env.HELIODOR_DEMO_PASSWORD ?? 'fernhollow-demo');
  return session;
}

async function identities(o: Options, random: () => number, say: (s: string) => void): Promise<LoggerIdentity[]> {
  const fromConsole = o.firmware.trim() === 'console';
  const byBoard = firmwareByBoard(fromConsole ? 'A=2.1.4,B=2.2.0,C=2.2.0' : o.firmware);
  const onRecord = fromConsole ? await firmwareOnRecord(await adminSession(o)) : new Map<string, string>();
  const firmware = (serial: string, board: string) => onRecord.get(serial) ?? byBoard(board);
  if (o.pilotOf && !o.register) throw new SetupError('--pilot-of registers new loggers: add --register');
  if (o.register) {
    const session = await adminSession(o);
    const pilot = o.pilotOf ? await pilotTarget(session, o.pilotOf, byBoard, o.model) : null;
    say(`registering and enrolling ${o.loggers} loggers through the console API${pilot ? ` at the ${pilot.siteIds.length} pilot sites of ${pilot.version} (${pilot.channel} channel, boards ${pilot.boards.join(', ')})` : ''}…`);
    const prefix = `SIM${Date.now().toString(36).toUpperCase()}`;
    return registerFleet(session, {
      count: o.loggers,
      model: pilot?.modelId ?? o.model,
      earlyShare: pilot ? (pilot.channel === 'early' ? 1 : 0) : o.earlyShare,
      siteIds: pilot?.siteIds,
      boards: pilot?.boards,
      firmware: byBoard,
      securityCounter: o.counter,
      random,
      serialPrefix: prefix,
    });
  }
  const file = o.benchSheet ?? path.join(dataDir, 'demo', 'bench-sheet.csv');
  if (!fs.existsSync(file)) throw new SetupError(`no bench sheet at ${file}: pass --bench-sheet <file>, or --register`);
  const rows = readBenchSheet(fs.readFileSync(file, 'utf8'));
  if (rows.length < o.loggers) say(`the bench sheet has ${rows.length} loggers; simulating those`);
  return rows.slice(0, o.loggers).map((r) => ({ serial: r.serial, token: r.token, board: r.board, firmware: firmware(r.serial, r.board), securityCounter: o.counter }));
}

async function simulate(o: Options): Promise<number> {
  const say = (s: string) => process.stderr.write(`${s}\n`);
  let url: URL;
  try {
    url = new URL(o.url);
    if (url.protocol !== 'http:' && url.protocol !== 'https:') throw new Error('not http');
  } catch {
    say(`simulate: --url must be an http(s) origin such as http://127.0.0.1:8080`);
    return 2;
  }
  const start = o.start ? new Date(o.start) : new Date();
  if (Number.isNaN(start.getTime())) {
    say('simulate: --start must be an RFC 3339 time such as 2026-06-21T06:00:00Z');
    return 2;
  }
  if (o.days !== undefined) {
    try {
      const result = await runDriftDemo({
        drift: o.drift,
        days: o.days,
        loggers: o.loggersGiven ? o.loggers : 20,
        seed: o.seed,
        start: o.start ? start : new Date(Date.UTC(2026, 5, 8)),
        out: (line) => process.stdout.write(`${line}\n`),
      });
      // A drifting release must trip, and a release without drift must not.
      return result.tripped === (o.drift !== 1) ? 0 : 1;
    } catch (error) {
      const known = error instanceof SetupError || error instanceof ManifestError;
      say(`simulate: ${known ? '' : 'unexpected error: '}${error instanceof Error ? error.message : String(error)}`);
      return 1;
    }
  }
  if (o.demoThreshold) {
    try {
      const result = await runThresholdDemo({ session: await adminSession(o), baseUrl: url.origin, loggers: o.loggersGiven ? Math.min(o.loggers, 100) : 6, seed: o.seed, say });
      process.stdout.write(thresholdSummary(result));
      return result.ok ? 0 : 1;
    } catch (error) {
      const known = error instanceof SetupError || error instanceof ManifestError;
      say(`simulate: ${known ? '' : 'unexpected error: '}${error instanceof Error ? error.message : String(error)}`);
      return 1;
    }
  }
  try {
    const keysDir = o.keys ?? path.join(dataDir, 'demo');
    if (!fs.existsSync(keysDir)) throw new SetupError(`no trusted keys folder at ${keysDir}: pass --keys <dir> with the signing keys' public PEMs`);
    const trustedKeys = loadTrustedKeys(keysDir);
    if (trustedKeys.length === 0) throw new SetupError(`no public-key PEM in ${keysDir}: every install would fail its signature check`);

    const random = seededRandom(o.seed);
    const who = await identities(o, random, say);
    const clock = acceleratedClock(start, o.speed);
    const tally = new FleetTally();
    const loggers = buildFleet(
      who,
      { baseUrl: url.origin, clock, random, trustedKeys, failRate: o.failRate, interruptRate: o.interruptRate, drift: o.drift, spreadS: 60 },
      tally,
    );
    const until = new Date(start.getTime() + o.minutes * 60_000 * o.speed);
    say(`${loggers.length} loggers → ${url.origin}, ${o.minutes} min at ${o.speed}× (simulated ${start.toISOString()} … ${until.toISOString()}), ${trustedKeys.length} trusted key(s)`);

    let stop = false;
    const onSignal = () => {
      stop = true;
    };
    process.once('SIGINT', onSignal);
    const tty = process.stdout.isTTY === true;
    let shownAt = 0;
    const show = (final = false) => {
      const wall = Date.now();
      if (!final && wall - shownAt < (tty ? 250 : 10_000)) return;
      shownAt = wall;
      const line = `${clock().toISOString().slice(0, 16).replace('T', ' ')}  ${tally.line()}`;
      process.stdout.write(tty ? `\r\x1b[2K${line}${final ? '\n' : ''}` : `${line}\n`);
    };
    const sleep = (ms: number) => new Promise<void>((resolve) => setTimeout(resolve, Math.max(1, ms)));
    await runFleet(loggers, {
      clock,
      until,
      concurrency: o.concurrency,
      tally,
      waitUntil: (at) => sleep(Math.min(250, (at.getTime() - clock().getTime()) / o.speed)),
      pause: () => sleep(100),
      onStep: () => {
        show();
        return stop;
      },
    });
    process.off('SIGINT', onSignal);
    show(true);

    const c = tally.counts;
    const versions = new Map<string, number>();
    for (const l of loggers) versions.set(l.firmware, (versions.get(l.firmware) ?? 0) + 1);
    const list = (r: Record<string, number>) => Object.entries(r).map(([k, v]) => `${k} ${v}`).join(', ') || 'none';
    process.stdout.write(
      [
        '',
        `Summary${stop ? ' (stopped early)' : ''}`,
        `  check-ins      ${c.checkIns}`,
        `  offers taken   ${c.offers}`,
        `  installs       ${c.installs}`,
        `  failures       ${c.failures}${c.failures ? ` (${list(c.failuresByReason)})` : ''}`,
        `  errors         ${c.errors}`,
        `  backoffs       ${c.backoffs} (429/503 with Retry-After)`,
        `  interruptions  ${c.interruptions} (downloads resumed)`,
        `  resets         ${list(c.resets)}`,
        ...(o.drift !== 1
          ? [
              `  drift          ${Object.keys(c.drifted).length ? `${list(c.drifted)} logger(s) report current × ${o.drift} since installing` : `none yet: no logger installed a release (× ${o.drift} waits for one)`}`,
              ...(await driftOutcome(o, Object.keys(c.drifted), say)),
            ]
          : []),
        `  now running    ${[...versions].sort(([a], [b]) => a.localeCompare(b, 'en', { numeric: true })).map(([v, n]) => `${v} × ${n}`).join(', ')}`,
        ...tally.errorSamples.map((e, i) => `${i === 0 ? '  first errors   ' : '                 '}${e}`),
        '',
      ].join('\n'),
    );
    return c.errors > 0 ? 1 : 0;
  } catch (error) {
    const known = error instanceof SetupError || error instanceof ManifestError;
    say(`simulate: ${known ? '' : 'unexpected error: '}${error instanceof Error ? error.message : String(error)}`);
    return 1;
  }
}

/**
 * What became of the releases the drifting loggers installed, when the console can be asked (an admin
 * sign-in, as --register uses): the server trips a release on measurement drift once 20 loggers have a
 * whole UTC day on it to compare with the days before (server/rollout/drift.ts).
 */
async function driftOutcome(o: Options, versions: string[], say: (s: string) => void): Promise<string[]> {
  if (versions.length === 0) return [];
  try {
    const session = await adminSession(o);
    const { rows } = await session.request<{ rows: { id: string; version: string; state: string }[] }>('GET', '/api/releases');
    const lines: string[] = [];
    for (const r of rows.filter((x) => versions.includes(x.version))) {
      const dashboard = await session.request<{ trip: { drift: { over: boolean; energy: { loggers: number; shift: number | null; judged: boolean } } } }>('GET', `/api/releases/${r.id}/dashboard`);
      const e = dashboard.trip.drift.energy;
      const shift = e.shift === null ? 'no whole day on it yet' : `energy ${Number((e.shift * 100).toFixed(1))} % over ${e.loggers} loggers`;
      lines.push(`  release ${r.version}  ${r.state}${r.state === 'stopped' ? ' (tripped)' : ''}; drift gauge: ${shift}${e.judged ? '' : ' (not judged yet: 20 loggers with a whole UTC day after their install are needed)'}`);
    }
    return lines;
  } catch (error) {
    say(`simulate: could not read the releases from the console (${error instanceof Error ? error.message : String(error)}); the drift is judged by the server either way`);
    return [];
  }
}

buildProgram(simulate)
  .parseAsync(process.argv)
  .catch((error: unknown) => {
    process.stderr.write(`simulate: ${(error as Error).message}\n`);
    process.exitCode = 1;
  });
