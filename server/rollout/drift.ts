// The measurement-drift trip rule: a release that breaks the measurement code (a wrong calibration
// constant, a units slip) installs cleanly and resets no more often, yet corrupts every reading after it.
// Pure: no I/O. The daily figures are kept per logger by the check-in (`checkInDay` below, written to
// logger_days by server/device-api/checkin-store.ts), read by server/releases/trip.ts, judged here, and
// a trip stops the release through the one writer of transitions. The release dashboard shows the same
// rule as a gauge (`driftGauge`), so what it shows is what the rule decides.
//
// The rule, where the brief for it was silent (also in DEVICE_API.md and the OpenAPI document):
// - Days are UTC days. A logger that confirmed the release is compared over whole days: up to 7 days
//   before the day it confirmed it (on the versions before), against up to 7 days after that day, and
//   only days that are over (today is not yet a whole day). The install day itself is left out: it
//   mixes both versions.
// - Three figures per logger, each from the sums over its days:
//   · energy: measured energy ÷ the clear-sky energy of the same check-in intervals (lib/solar.ts, the
//     model the simulator's panels see), after ÷ before − 1. The logger's own ratio before scales the
//     model to its panel, wiring and shading, so panels of every size compare alike;
//   · temperature: the mean of probe temperature minus the site's expected air temperature
//     (lib/solar.ts ambientTemperatureC) over the probe readings that were not flagged, after − before, °C
//     (the readings carry the probe's temperature, not the air's: DEVICE_API.md `readings`);
//   · flagged share: probe readings flagged (the power-on value, or outside the probe's range) ÷ probe
//     readings, after − before.
// - Weather: a cloudy week after the install lowers every panel's energy and its warming above the air,
//   installed or not. So each logger is compared with a control: the loggers at the same site that did
//   not confirm the release, over the same days (their own after ÷ before, the median of them). Where its
//   site has no such logger, the controls at the other sites the release reached stand in (the Vale is
//   one valley, and its weather mostly one). A logger with no control at all is not judged on energy or
//   temperature, since weather cannot then be told from drift; the flagged share needs no control (the
//   weather does not flag a probe), and is corrected by one when there is.
// - The release trips when, over at least 20 loggers with the figure on both sides, the median corrected
//   shift is beyond its trip point: energy by more than tripDriftEnergy either way, temperature by more
//   than tripDriftTempC either way, the flagged share up by more than tripDriftFlagged. The shifts are
//   rounded to nine decimal places first, so a shift exactly at its trip point (energy at 90 % of before
//   against 10 %) is at it, not a rounding error beyond it, and does not trip.
import type { TripFigures } from '../../schemas/releases';
import { DRIFT_TRIP_POINT_NAMES, type DriftTripPoint } from '../../schemas/words';
import { ambientTemperatureC, clearSkyInsolationWh, type Spot } from '../../lib/solar';
import { probeReadingFault } from '../../lib/calibration';
import type { TripVerdict } from './trip';

export const DRIFT_MIN_LOGGERS = 20;
/** Days compared on each side of the install day. */
export const DRIFT_WINDOW_DAYS = 7;
/** Longer than this between two check-ins, the energy counted between them is not attributed to a day. */
export const DRIFT_MAX_GAP_MS = 48 * 3_600_000;

export type DriftPoints = Record<DriftTripPoint, number>;

/** A release's drift trip points as numbers (NUMERIC columns arrive as text from raw queries). */
export function driftTripPointsOf(r: Record<DriftTripPoint, number | string>): DriftPoints {
  return Object.fromEntries(DRIFT_TRIP_POINT_NAMES.map((n) => [n, Number(r[n])])) as DriftPoints;
}

/** One logger's sums for one UTC day (a row of logger_days). */
export type DriftDay = {
  /** YYYY-MM-DD, UTC. */
  day: string;
  /** Energy measured over the day's check-in intervals, Wh. */
  energyWh: number;
  /** Clear-sky insolation on the panel's plane over the same intervals, Wh/m². */
  clearSkyWh: number;
  /** Sum of (probe − expected air temperature) over the unflagged probe readings, °C, and how many. */
  tempExcessSumC: number;
  tempReadings: number;
  /** Probe readings, and of them flagged. */
  probeReadings: number;
  probeFlagged: number;
};

/** A logger that confirmed the release: its days before the install day and after it. */
export type DriftLogger = { loggerId: string; siteId: string | null; before: DriftDay[]; after: DriftDay[] };
/** A logger at a site the release reached that did not confirm it. */
export type DriftControl = { loggerId: string; siteId: string | null; days: DriftDay[] };
export type DriftInput = { installed: DriftLogger[]; controls: DriftControl[] };

export type DriftFigure = {
  /** Loggers with this figure on both sides (and a control, for energy and temperature). */
  loggers: number;
  /** The median shift, corrected by the controls: a fraction for energy and the flagged share, °C for temperature. */
  shift: number | null;
};

export type DriftFigures = { energy: DriftFigure; temperature: DriftFigure; flagged: DriftFigure; controls: number };

export const DRIFT_FIGURES = ['energy', 'temperature', 'flagged'] as const;
export type DriftFigureName = (typeof DRIFT_FIGURES)[number];
const POINT_OF: Record<DriftFigureName, DriftTripPoint> = { energy: 'tripDriftEnergy', temperature: 'tripDriftTempC', flagged: 'tripDriftFlagged' };

type Sums = { energyWh: number; clearSkyWh: number; tempExcessSumC: number; tempReadings: number; probeReadings: number; probeFlagged: number };

function sum(days: readonly DriftDay[]): Sums {
  const s: Sums = { energyWh: 0, clearSkyWh: 0, tempExcessSumC: 0, tempReadings: 0, probeReadings: 0, probeFlagged: 0 };
  for (const d of days) {
    s.energyWh += d.energyWh;
    s.clearSkyWh += d.clearSkyWh;
    s.tempExcessSumC += d.tempExcessSumC;
    s.tempReadings += d.tempReadings;
    s.probeReadings += d.probeReadings;
    s.probeFlagged += d.probeFlagged;
  }
  return s;
}

/** The three figures of one side: energy ÷ clear-sky, mean temperature excess, flagged share (null without data). */
function sideOf(days: readonly DriftDay[]) {
  const s = sum(days);
  return {
    energy: s.clearSkyWh > 0 ? s.energyWh / s.clearSkyWh : null,
    temperature: s.tempReadings > 0 ? s.tempExcessSumC / s.tempReadings : null,
    flagged: s.probeReadings > 0 ? s.probeFlagged / s.probeReadings : null,
  };
}

/** After against before: energy as a ratio (needs energy before), temperature and flagged share as differences. */
function change(before: readonly DriftDay[], after: readonly DriftDay[]): Record<DriftFigureName, number | null> {
  const b = sideOf(before);
  const a = sideOf(after);
  return {
    energy: b.energy !== null && b.energy > 0 && a.energy !== null ? a.energy / b.energy : null,
    temperature: b.temperature !== null && a.temperature !== null ? a.temperature - b.temperature : null,
    flagged: b.flagged !== null && a.flagged !== null ? a.flagged - b.flagged : null,
  };
}

/** The median: the middle value, or the mean of the two middle ones (docs/SOURCES.md §21). Null for none. */
export function median(values: readonly number[]): number | null {
  if (values.length === 0) return null;
  const v = [...values].sort((x, y) => x - y);
  const mid = Math.floor(v.length / 2);
  return v.length % 2 ? v[mid] : (v[mid - 1] + v[mid]) / 2;
}

/** A shift at nine decimal places: floating point's last bits do not decide a trip. */
const atResolution = (x: number) => Math.round(x * 1e9) / 1e9;

/** The median corrected shifts over the loggers that confirmed the release. */
export function driftFigures(input: DriftInput): DriftFigures {
  const bySite = new Map<string | null, DriftControl[]>();
  for (const c of input.controls) bySite.set(c.siteId, [...(bySite.get(c.siteId) ?? []), c]);
  const shifts: Record<DriftFigureName, number[]> = { energy: [], temperature: [], flagged: [] };
  const controlsUsed = new Set<string>();

  for (const logger of input.installed) {
    const own = change(logger.before, logger.after);
    const beforeDays = new Set(logger.before.map((d) => d.day));
    const afterDays = new Set(logger.after.map((d) => d.day));
    const controlChanges = (controls: readonly DriftControl[]) =>
      controls.map((c) => ({ id: c.loggerId, change: change(c.days.filter((d) => beforeDays.has(d.day)), c.days.filter((d) => afterDays.has(d.day))) }));
    const atSite = controlChanges(logger.siteId === null ? [] : (bySite.get(logger.siteId) ?? []));
    for (const figure of DRIFT_FIGURES) {
      if (own[figure] === null) continue;
      let found = atSite.filter((c) => c.change[figure] !== null);
      if (found.length === 0) found = controlChanges(input.controls).filter((c) => c.change[figure] !== null);
      const control = median(found.map((c) => c.change[figure]!));
      for (const c of found) controlsUsed.add(c.id);
      if (figure === 'energy') {
        if (control === null || control <= 0) continue;
        shifts.energy.push(own.energy! / control - 1);
      } else if (figure === 'temperature') {
        if (control === null) continue;
        shifts.temperature.push(own.temperature! - control);
      } else {
        shifts.flagged.push(own.flagged! - (control ?? 0));
      }
    }
  }
  const figure = (values: number[]): DriftFigure => {
    const m = median(values);
    return { loggers: values.length, shift: m === null ? null : atResolution(m) };
  };
  return { energy: figure(shifts.energy), temperature: figure(shifts.temperature), flagged: figure(shifts.flagged), controls: controlsUsed.size };
}

/** Whether one figure is judged (enough loggers) and beyond its trip point (strictly). */
function beyond(points: DriftPoints, name: DriftFigureName, f: DriftFigure): boolean {
  if (f.loggers < DRIFT_MIN_LOGGERS || f.shift === null) return false;
  const point = points[POINT_OF[name]];
  // The flagged share trips only rising: fewer flagged readings do no harm to the data.
  return name === 'flagged' ? f.shift > point : Math.abs(f.shift) > point;
}

const pct = (x: number) => `${Number((x * 100).toFixed(1))} %`;
const signedPct = (x: number) => `${x > 0 ? '+' : x < 0 ? '−' : ''}${pct(Math.abs(x))}`;
const signedC = (x: number) => `${x > 0 ? '+' : x < 0 ? '−' : ''}${Number(Math.abs(x).toFixed(1))} °C`;
const pointWords = (name: DriftFigureName, p: number) => (name === 'temperature' ? `${p} °C` : name === 'flagged' ? `${Number((p * 100).toFixed(2))} percentage points` : pct(p));

/** One figure in words: "daily energy against the clear-sky model −50 %". */
export function driftFigureWords(name: DriftFigureName, shift: number): string {
  if (name === 'energy') return `daily energy against the clear-sky model ${signedPct(shift)}`;
  if (name === 'temperature') return `probe temperature above the expected air temperature ${signedC(shift)}`;
  return `flagged probe readings ${shift > 0 ? '+' : shift < 0 ? '−' : ''}${Number((Math.abs(shift) * 100).toFixed(1))} percentage points`;
}

export function driftVerdict(points: DriftPoints, f: DriftFigures): TripVerdict {
  const tripped = DRIFT_FIGURES.filter((name) => beyond(points, name, f[name]));
  if (tripped.length === 0) return { trip: false };
  const parts = tripped.map((name) => `${driftFigureWords(name, f[name].shift!)} (median of ${f[name].loggers} loggers, trip point ${pointWords(name, points[POINT_OF[name]])})`);
  const tripPoints = Object.fromEntries(DRIFT_TRIP_POINT_NAMES.map((n) => [n, points[n]])) as DriftPoints;
  return {
    trip: true,
    rule: 'measurement_drift',
    reason: `Trip: readings shifted after the install against the days before it, weather taken out by ${f.controls} loggers that did not install it: ${parts.join('; ')}.`,
    figures: {
      rule: 'measurement_drift',
      tripped,
      energyShift: f.energy.shift,
      energyLoggers: f.energy.loggers,
      tempShiftC: f.temperature.shift,
      tempLoggers: f.temperature.loggers,
      flaggedShift: f.flagged.shift,
      flaggedLoggers: f.flagged.loggers,
      controls: f.controls,
      tripPoints,
    } satisfies TripFigures,
  };
}

/** The drift figures beside their trip points, as the release dashboard shows them: `over` is what the verdict decides. */
export function driftGauge(points: DriftPoints, f: DriftFigures) {
  const gauge = (name: DriftFigureName) => ({
    loggers: f[name].loggers,
    shift: f[name].shift,
    threshold: points[POINT_OF[name]],
    judged: f[name].loggers >= DRIFT_MIN_LOGGERS && f[name].shift !== null,
    over: beyond(points, name, f[name]),
  });
  return {
    minLoggers: DRIFT_MIN_LOGGERS,
    windowDays: DRIFT_WINDOW_DAYS,
    controls: f.controls,
    energy: gauge('energy'),
    temperature: gauge('temperature'),
    flagged: gauge('flagged'),
    over: driftVerdict(points, f).trip,
  };
}
export type DriftGauge = ReturnType<typeof driftGauge>;

// ─── What one check-in adds to its logger's day ────────────────────────────

export type CheckInDay = {
  /** The UTC day of the check-in, YYYY-MM-DD. */
  day: string;
  /**
   * The previous check-in the energy is counted from: the energy counted since it is attributed to this
   * day only when the logger row still names it (no other check-in came between), else nothing is.
   */
  since: Date | null;
  /** The energy reading counts from the boot (a reboot since the previous check-in), not from that check-in. */
  rebooted: boolean;
  /** Clear-sky insolation over the interval the energy covers, Wh/m². */
  clearSkyWh: number;
  /** Probe minus expected air temperature, °C, for an unflagged probe reading at a site with coordinates. */
  tempExcessC: number | null;
  probeReadings: 0 | 1;
  probeFlagged: 0 | 1;
};

/**
 * A check-in's part of its logger's day: the clear-sky energy of the interval its energy reading covers
 * (from the previous check-in, or from the boot when `uptime_s` says it rebooted since), and its probe
 * reading against the expected air temperature. Without coordinates there is no sky to compare with.
 */
export function checkInDay(input: { now: Date; lastCheckInAt: Date | null; uptimeS: number | null; spot: Spot | null; tempC: number | null; energyWh: number | null }): CheckInDay {
  const { now, lastCheckInAt, uptimeS, spot, tempC } = input;
  const day = now.toISOString().slice(0, 10);
  const gapMs = lastCheckInAt ? now.getTime() - lastCheckInAt.getTime() : null;
  const counted = spot !== null && input.energyWh !== null && lastCheckInAt !== null && gapMs !== null && gapMs > 0 && gapMs <= DRIFT_MAX_GAP_MS;
  const rebooted = counted && uptimeS !== null && uptimeS * 1000 < gapMs!;
  const from = rebooted ? new Date(now.getTime() - uptimeS! * 1000) : lastCheckInAt;
  const clearSkyWh = counted && from ? clearSkyInsolationWh(from, now, spot!) : 0;
  const fault = tempC === null ? null : probeReadingFault(tempC);
  return {
    day,
    since: counted ? lastCheckInAt : null,
    rebooted,
    clearSkyWh,
    tempExcessC: tempC !== null && fault === null && spot !== null ? tempC - ambientTemperatureC(now, spot) : null,
    probeReadings: tempC === null ? 0 : 1,
    probeFlagged: fault === null ? 0 : 1,
  };
}
