// The README's drift command, run as a person runs it: `npm run simulate -- --drift 0.5 --days 5`
// starts its own Heliodor on a scratch database in a throwaway PostgreSQL with a stepped clock, and the
// release its board B loggers install trips on measurement drift. Sources: DEVICE_API.md "Trip" (the
// median shift of whole UTC days after the install day against the days before, corrected by the
// loggers at the same sites that did not install it, over at least 20 loggers, beyond tripDriftEnergy,
// 10 %); the power-monitor data sheet's power register, Power = Current × BusVoltage (docs/SOURCES.md
// §8, Eq. 4), so current × 0.5 at the same voltage is half the power and half the energy, a shift of −50 %; the clear-sky model the energy is divided by is docs/SOURCES.md §21.
import fs from 'node:fs';
import net from 'node:net';
import { simulate as runSimulator } from '../helpers/simulate';

const simulate = (args: string[]) => runSimulator(args, { timeoutMs: 240_000 });

/** Whether anything accepts a TCP connection on 127.0.0.1:port. */
function listening(port: number): Promise<boolean> {
  return new Promise((resolve) => {
    const socket = net.connect({ host: '127.0.0.1', port });
    socket.once('connect', () => {
      socket.destroy();
      resolve(true);
    });
    socket.once('error', () => resolve(false));
  });
}

test('when the README drift command runs, then it says it runs its own Heliodor on a scratch database with a stepped clock, the drifting release trips on day 4 with its e-mail, and nothing it started is left behind', async () => {
  const run = await simulate(['--drift', '0.5', '--days', '5']);
  expect({ code: run.code, stderr: run.stderr }).toMatchObject({ code: 0 });
  const out = run.stdout;
  expect(out).toContain('this run starts its own Heliodor in this process, on a scratch database in a throwaway\nPostgreSQL, with a stepped clock');
  expect(out).toContain('20 loggers on board B and 4 controls on board A enrolled at');

  // Day 1 on 1.0.0, the install on day 2, day 3 the first whole day on 2.0.0, the trip early on day 4 (DEVICE_API.md "Trip").
  expect(out).toMatch(/^Day 1 {2}2026-06-08\n {2}check-ins \d+, installs 0; running 1\.0\.0 × 24\n/m);
  expect(out).toMatch(/^ {2}check-ins \d+, installs 20, 20 loggers now report current × 0\.5; running 2\.0\.0 × 20, 1\.0\.0 × 4$/m);
  expect(out).toMatch(/^Day 3 {2}2026-06-10\n[^]*?release 2\.0\.0 pilot; drift gauge: not judged yet/m);
  expect(out).toMatch(/^Day 4 {2}2026-06-11 \(until \d\d:\d\d UTC\)$/m);
  expect(out).not.toMatch(/^Day 5/m);

  // What the loggers reported on day 3: half the energy on board B, the controls roughly where they were.
  const day3 = /^Day 3[^]*?shift from day 1 \(median\): board B ([−+±][\d.]+) %, controls ([−+±][\d.]+) %/m.exec(out);
  const pct = (s: string) => Number(s.replace('−', '-').replace('±', ''));
  expect(day3).not.toBeNull();
  expect(pct(day3![1])).toBeGreaterThan(-60);
  expect(pct(day3![1])).toBeLessThan(-40);

  // The trip line: the state, who stopped it, the drift figures and the e-mail's subject.
  expect(out).toMatch(/^TRIP {2}2026-06-11 \d\d:\d\d UTC {2}release 2\.0\.0 state stopped, stoppedBy trip$/m);
  const energy = /drift figures: energy ([−+][\d.]+) % over 20 loggers, .*, 4 controls; trip points 10 %, 3 °C, 2 points/.exec(out);
  expect(energy).not.toBeNull();
  // Half the current: −50 % (P = V × I), give or take the weather the controls take out.
  expect(pct(energy![1])).toBeGreaterThan(-60);
  expect(pct(energy![1])).toBeLessThan(-40);
  // The subject names every figure past its trip point; energy comes first (the probe's may follow when the weather moved it).
  expect(out).toMatch(/mail: "Release 2\.0\.0 of FL-2D drift demo tripped: measurements drifted after the install: daily energy against the clear-sky model −\d+(\.\d)? %(, [^"]+)?"/);

  // Cleaned up: the cluster's folder is gone and its PostgreSQL no longer listens.
  const cluster = /creating PostgreSQL cluster in (\S+)\/pg\/cluster/.exec(out);
  const port = /PostgreSQL listening on 127\.0\.0\.1:(\d+)/.exec(out);
  expect(cluster && port).toBeTruthy();
  expect(out).toMatch(/scratch database and its cluster removed\n$/);
  expect(fs.existsSync(cluster![1])).toBe(false);
  expect(await listening(Number(port![1]))).toBe(false);
}, 300_000);
