// The measurement-drift trip rule (server/rollout/drift.ts) on hand-built daily series. Each logger's
// energy is its panel's share of the clear-sky energy (a constant per logger, as a fixed panel and
// wiring give) times the day's weather, which every logger at a site shares; a broken release scales
// the energy of the loggers that installed it. The rule's own choices (whole UTC days, controls at the
// same site, median over at least 20 loggers, strictly beyond the trip point) are ours, documented in
// drift.ts; the model and the median are docs/SOURCES.md §21.
import { checkInDay, DRIFT_MAX_GAP_MS, DRIFT_MIN_LOGGERS, driftFigures, driftGauge, driftVerdict, median, type DriftControl, type DriftDay, type DriftInput, type DriftLogger } from '../../server/rollout/drift';
import { tripHeadline } from '../../server/rollout/trip';
import { airMass, ambientTemperatureC, clearSkyBeam, clearSkyInsolationWh, clearSkyIrradiance } from '../../lib/solar';
import { DRIFT_TRIP_POINTS } from '../../schemas/words';

const POINTS = { ...DRIFT_TRIP_POINTS };
const VALE = { latitude: 52.14, longitude: -1.98 };

const BEFORE = ['2026-06-10', '2026-06-11', '2026-06-12'];
const AFTER = ['2026-06-14', '2026-06-15', '2026-06-16'];
/** Clear-sky energy on the panel's plane per day, Wh/m² (a summer day in the Vale, rounded). */
const CLEAR_SKY: Record<string, number> = { '2026-06-10': 7400, '2026-06-11': 7420, '2026-06-12': 7440, '2026-06-14': 7460, '2026-06-15': 7470, '2026-06-16': 7480 };

type Scenario = {
  /** The day's weather: share of the clear-sky energy getting through, the same for every logger. */
  weather?: (day: string) => number;
  /** What the release does to the energy a logger that installed it reports. */
  energyScale?: number;
  /** What it adds to the probe's temperature (°C), and the share of probe readings it makes flagged. */
  tempOffsetC?: number;
  flaggedShare?: number;
};

/** One day of one logger: 96 check-ins (every 15 minutes), `panelShare` of clear-sky energy, the probe 8 °C above the air on a clear day. */
function day(d: string, panelShare: number, weather: number, drift: { energyScale: number; tempOffsetC: number; flaggedShare: number }): DriftDay {
  const readings = 96;
  const flagged = Math.round(readings * drift.flaggedShare);
  return {
    day: d,
    energyWh: CLEAR_SKY[d] * panelShare * weather * drift.energyScale,
    clearSkyWh: CLEAR_SKY[d],
    tempExcessSumC: (8 * weather + drift.tempOffsetC) * (readings - flagged),
    tempReadings: readings - flagged,
    probeReadings: readings,
    probeFlagged: flagged,
  };
}

const NONE = { energyScale: 1, tempOffsetC: 0, flaggedShare: 0 };

/** `installed` loggers that installed the release and `controls` that did not, spread over three sites. */
function fleet(installed: number, controls: number, s: Scenario = {}): DriftInput {
  const weather = s.weather ?? (() => 0.8);
  const drift = { energyScale: s.energyScale ?? 1, tempOffsetC: s.tempOffsetC ?? 0, flaggedShare: s.flaggedShare ?? 0 };
  const site = (i: number) => `site-${i % 3}`;
  // Panels of 20, 50 and 100 W catch different shares of the sky; the rule scales each by its own.
  const share = (i: number) => [0.02, 0.05, 0.1][i % 3] * (1 + (i % 7) / 100);
  const loggers: DriftLogger[] = Array.from({ length: installed }, (_, i) => ({
    loggerId: `installed-${i}`,
    siteId: site(i),
    before: BEFORE.map((d) => day(d, share(i), weather(d), NONE)),
    after: AFTER.map((d) => day(d, share(i), weather(d), drift)),
  }));
  const others: DriftControl[] = Array.from({ length: controls }, (_, i) => ({
    loggerId: `control-${i}`,
    siteId: site(i),
    days: [...BEFORE, ...AFTER].map((d) => day(d, share(i + 1), weather(d), NONE)),
  }));
  return { installed: loggers, controls: others };
}

const cloudyWeekAfter = (d: string) => (AFTER.includes(d) ? 0.35 : 0.85);

describe('the measurement-drift rule', () => {
  test('when a release halves the current its loggers measure, then daily energy against the clear-sky model falls by half and the release trips on energy', () => {
    const f = driftFigures(fleet(24, 6, { energyScale: 0.5 }));
    expect(f.energy).toEqual({ loggers: 24, shift: -0.5 });
    const verdict = driftVerdict(POINTS, f);
    expect(verdict.trip).toBe(true);
    if (!verdict.trip || verdict.figures.rule !== 'measurement_drift') throw new Error('expected a drift trip');
    expect(verdict.rule).toBe('measurement_drift');
    expect(verdict.figures).toMatchObject({ tripped: ['energy'], energyShift: -0.5, energyLoggers: 24, controls: 6, tripPoints: POINTS });
    expect(verdict.reason).toMatch(/daily energy against the clear-sky model −50 % \(median of 24 loggers, trip point 10 %\)/);
    expect(tripHeadline(verdict.figures)).toBe('measurements drifted after the install: daily energy against the clear-sky model −50 %');
  });

  test('when a cloudy week follows the install, then the loggers at the same sites that did not install it take the weather out and nothing trips', () => {
    const input = fleet(24, 6, { weather: cloudyWeekAfter });
    // Uncorrected, every logger's energy against the clear sky fell to 0.35 / 0.85 of before (−59 %).
    const alone = driftFigures({ installed: input.installed, controls: [] });
    expect(alone.energy.loggers).toBe(0); // without a control, energy is not judged at all
    const f = driftFigures(input);
    expect(f.energy).toEqual({ loggers: 24, shift: 0 });
    expect(f.temperature).toEqual({ loggers: 24, shift: 0 });
    expect(driftVerdict(POINTS, f)).toEqual({ trip: false });
  });

  test('when a cloudy week follows an install that also halves the current, then the drift still shows through the weather and trips', () => {
    const f = driftFigures(fleet(24, 6, { weather: cloudyWeekAfter, energyScale: 0.5 }));
    expect(f.energy.shift).toBe(-0.5);
    expect(driftVerdict(POINTS, f).trip).toBe(true);
  });

  test('when a site has no logger that stayed behind, then its loggers are compared with the controls at the other sites', () => {
    const input = fleet(24, 6, { weather: cloudyWeekAfter });
    const controls = input.controls.filter((c) => c.siteId !== 'site-0');
    const f = driftFigures({ ...input, controls });
    expect(f.energy).toEqual({ loggers: 24, shift: 0 });
    expect(f.controls).toBe(controls.length);
  });

  test('when fewer than 20 loggers installed it, then even a halving never trips; at 20 it does', () => {
    expect(DRIFT_MIN_LOGGERS).toBe(20);
    const nineteen = driftFigures(fleet(19, 6, { energyScale: 0.5, tempOffsetC: 20, flaggedShare: 0.5 }));
    expect(nineteen.energy).toEqual({ loggers: 19, shift: -0.5 });
    expect(driftVerdict(POINTS, nineteen)).toEqual({ trip: false });
    expect(driftGauge(POINTS, nineteen).energy).toMatchObject({ judged: false, over: false });
    expect(driftVerdict(POINTS, driftFigures(fleet(20, 6, { energyScale: 0.5 }))).trip).toBe(true);
  });

  test('when the energy shift is exactly the trip point (90 % of before against 10 %), then it does not trip; at 89 % it does', () => {
    const at = driftFigures(fleet(24, 6, { energyScale: 0.9 }));
    expect(at.energy.shift).toBe(-0.1);
    expect(driftVerdict(POINTS, at)).toEqual({ trip: false });
    expect(driftGauge(POINTS, at).energy).toMatchObject({ judged: true, over: false, threshold: 0.1 });
    expect(driftVerdict(POINTS, driftFigures(fleet(24, 6, { energyScale: 0.89 }))).trip).toBe(true);
    // Upwards too: a units slip that reads ten times the current.
    expect(driftVerdict(POINTS, driftFigures(fleet(24, 6, { energyScale: 1.1 })))).toEqual({ trip: false });
    expect(driftVerdict(POINTS, driftFigures(fleet(24, 6, { energyScale: 10 }))).trip).toBe(true);
  });

  test('when the probe reads exactly 3 °C warmer after the install, then it does not trip; 3.5 °C does, either way', () => {
    const at = driftFigures(fleet(24, 6, { tempOffsetC: 3 }));
    expect(at.temperature.shift).toBe(3);
    expect(driftVerdict(POINTS, at)).toEqual({ trip: false });
    const warm = driftVerdict(POINTS, driftFigures(fleet(24, 6, { tempOffsetC: 3.5 })));
    expect(warm.trip && warm.figures.rule === 'measurement_drift' && warm.figures.tripped).toEqual(['temperature']);
    expect(driftVerdict(POINTS, driftFigures(fleet(24, 6, { tempOffsetC: -3.5 }))).trip).toBe(true);
  });

  test('when the flagged share of probe readings rises by exactly 2 percentage points, then it does not trip; by more it does; a fall never does', () => {
    // 96 readings a day: 2 % is not a whole number of readings, so the points are set from the figures.
    const at = driftFigures(fleet(24, 6, { flaggedShare: 6 / 96 }));
    expect(at.flagged.shift).toBe(0.0625);
    expect(driftVerdict({ ...POINTS, tripDriftFlagged: 0.0625 }, at)).toEqual({ trip: false });
    expect(driftVerdict({ ...POINTS, tripDriftFlagged: 0.0624 }, at).trip).toBe(true);
    expect(driftVerdict(POINTS, driftFigures(fleet(24, 6, { flaggedShare: 3 / 96 }))).trip).toBe(true);
    const fewer = fleet(24, 6);
    for (const l of fewer.installed) for (const d of l.before) d.probeFlagged = 10;
    expect(driftFigures(fewer).flagged.shift).toBeLessThan(0);
    expect(driftVerdict(POINTS, driftFigures(fewer))).toEqual({ trip: false });
  });

  test('when no logger at any site stayed behind, then energy and temperature are not judged but the flagged share is (weather flags no probe)', () => {
    const f = driftFigures(fleet(24, 0, { energyScale: 0.5, flaggedShare: 3 / 96 }));
    expect(f.energy.loggers).toBe(0);
    expect(f.temperature.loggers).toBe(0);
    expect(f.flagged).toEqual({ loggers: 24, shift: 0.03125 });
    const verdict = driftVerdict(POINTS, f);
    expect(verdict.trip && verdict.figures.rule === 'measurement_drift' && verdict.figures.tripped).toEqual(['flagged']);
  });

  test('when a logger has no energy before the install or no days after it, then it is left out of the energy figure', () => {
    const input = fleet(21, 6, { energyScale: 0.5 });
    input.installed[0].before = input.installed[0].before.map((d) => ({ ...d, energyWh: 0 }));
    input.installed[1].after = [];
    expect(driftFigures(input).energy.loggers).toBe(19);
    expect(driftVerdict(POINTS, driftFigures(input))).toEqual({ trip: false });
  });

  test('when the dashboard gauge is read, then its over agrees with the verdict for every figure', () => {
    for (const s of [{}, { energyScale: 0.5 }, { tempOffsetC: 4 }, { flaggedShare: 0.1 }, { energyScale: 0.9 }] as Scenario[]) {
      const f = driftFigures(fleet(24, 6, s));
      expect(driftGauge(POINTS, f).over).toBe(driftVerdict(POINTS, f).trip);
    }
  });

  test('when the median is taken, then it is the middle value, or the mean of the two middle ones for an even count (NIST/SEMATECH §1.3.5.1, docs/SOURCES.md §21)', () => {
    expect(median([3, 1, 2])).toBe(2);
    expect(median([4, 1, 3, 2])).toBe(2.5);
    expect(median([])).toBeNull();
  });
});

describe('the clear-sky model the rule normalises by (docs/SOURCES.md §21)', () => {
  test('when the Sun stands overhead (AM1), then the beam is 1353 × 0.7 = 947.1 W/m² (Meinel & Meinel 1976, from memory)', () => {
    expect(clearSkyBeam(90)).toBeCloseTo(947.1 * Math.pow(0.7, Math.pow(airMass(90), 0.678) - 1), 6);
    expect(clearSkyBeam(90)).toBeCloseTo(947.1, 0);
  });

  test('when the air mass is 1.5, then the beam is 846.0 W/m² (Meinel & Meinel 1976, worked out)', () => {
    // The altitude at which Kasten & Young give AM1.5 is about 41.8°; the beam depends only on the air mass.
    let lo = 1;
    let hi = 90;
    for (let i = 0; i < 60; i++) {
      const mid = (lo + hi) / 2;
      if (airMass(mid) > 1.5) lo = mid;
      else hi = mid;
    }
    expect(clearSkyBeam(lo)).toBeCloseTo(846.0, 0);
  });

  test('when the Sun is 30° up, then Kasten & Young give an air mass of 1.994 (a flat atmosphere: 1/sin 30° = 2)', () => {
    expect(airMass(30)).toBeCloseTo(1.994, 3);
  });

  test('when the clear-sky energy of a midsummer day is summed, then it is the integral of the light, and zero over a night', () => {
    const from = new Date('2026-06-21T00:00:00Z');
    const to = new Date('2026-06-22T00:00:00Z');
    const wh = clearSkyInsolationWh(from, to, VALE);
    // A rectangle check of the trapezoid sum: one-minute samples of the same light.
    let minutes = 0;
    for (let t = from.getTime(); t < to.getTime(); t += 60_000) minutes += clearSkyIrradiance(new Date(t), VALE) / 60;
    expect(Math.abs(wh - minutes) / minutes).toBeLessThan(0.01);
    // Between 6 and 9 kWh/m² on a 35° south plane at 52° N in June (PVGIS clear-sky figures, from memory).
    expect(wh).toBeGreaterThan(6000);
    expect(wh).toBeLessThan(9000);
    expect(clearSkyInsolationWh(new Date('2026-12-21T20:00:00Z'), new Date('2026-12-22T04:00:00Z'), VALE)).toBe(0);
  });
});

describe("a check-in's part of its logger's day", () => {
  const now = new Date('2026-06-21T12:00:00Z');
  const base = { now, lastCheckInAt: new Date('2026-06-21T11:45:00Z'), uptimeS: 86_400, spot: VALE, tempC: 35, energyWh: 120 };

  test('when a logger checks in 15 minutes after the previous one, then the clear-sky energy of those 15 minutes is counted on its UTC day', () => {
    const d = checkInDay(base);
    expect(d.day).toBe('2026-06-21');
    expect(d.since).toEqual(base.lastCheckInAt);
    expect(d.rebooted).toBe(false);
    expect(d.clearSkyWh).toBeCloseTo(clearSkyInsolationWh(base.lastCheckInAt, now, VALE), 9);
    expect(d.tempExcessC).toBeCloseTo(35 - ambientTemperatureC(now, VALE), 9);
    expect([d.probeReadings, d.probeFlagged]).toEqual([1, 0]);
  });

  test('when the logger rebooted since the previous check-in (uptime shorter than the gap), then the clear-sky energy counts from the boot, as its energy reading does', () => {
    const d = checkInDay({ ...base, uptimeS: 300 });
    expect(d.rebooted).toBe(true);
    expect(d.clearSkyWh).toBeCloseTo(clearSkyInsolationWh(new Date(now.getTime() - 300_000), now, VALE), 9);
  });

  test('when the gap is longer than 48 hours, or there was no previous check-in, or the site has no coordinates, then no energy interval is counted', () => {
    expect(checkInDay({ ...base, lastCheckInAt: new Date(now.getTime() - DRIFT_MAX_GAP_MS - 1) })).toMatchObject({ since: null, clearSkyWh: 0 });
    expect(checkInDay({ ...base, lastCheckInAt: null })).toMatchObject({ since: null, clearSkyWh: 0 });
    expect(checkInDay({ ...base, spot: null })).toMatchObject({ since: null, clearSkyWh: 0, tempExcessC: null, probeReadings: 1 });
  });

  test('when the probe reads its power-on value of 85 °C or beyond its −55 to 125 °C range, then the reading is flagged and not averaged (temperature-probe data sheet, docs/SOURCES.md §9)', () => {
    expect(checkInDay({ ...base, tempC: 85 })).toMatchObject({ probeReadings: 1, probeFlagged: 1, tempExcessC: null });
    expect(checkInDay({ ...base, tempC: 126 })).toMatchObject({ probeReadings: 1, probeFlagged: 1, tempExcessC: null });
    expect(checkInDay({ ...base, tempC: null })).toMatchObject({ probeReadings: 0, probeFlagged: 0, tempExcessC: null });
  });
});
