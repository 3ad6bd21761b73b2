// The first-readings check of a newly enrolled logger: do its first readings agree with its wiring?
// Pure, shared by the server (which keeps the verdict with the logger, migration 0020) and the console
// (the logger page and the commissioning sheet). In the spirit of the commissioning tests of IEC 62446-1
// (docs/SOURCES.md §15): a record that what was installed measures what it should, not a PV system test.
//
// Which readings count: the first FIRST_READINGS_COUNTED check-ins with readings made under the measurement
// profile computed at enrollment (the check-in's config_version equals it). Before the logger runs its profile
// the power-monitor chip reads current and power as zero (no calibration value written; docs/SOURCES.md §8),
// so earlier readings say nothing about the wiring. A failure is final at once — later readings cannot undo a
// reversed shunt — and the installer starts the check again after fixing it.
import { COMMISSIONING_ITEMS, type CommissioningItem, type CommissioningState } from '../schemas/words';
import { coldVoc, formatVolts, PROBE_MAX_C, PROBE_MIN_C, PROBE_POWER_ON_C } from './calibration';

/** How many check-ins with readings the check waits for (our choice: three sample the wiring at three moments). */
export const FIRST_READINGS_COUNTED = 3;
/** The power-monitor chip's bus voltage step, 1.25 mV (docs/SOURCES.md §8 [S]). */
export const BUS_LSB_V = 0.00125;
/** What some probe libraries report when no probe answers (docs/SOURCES.md §9 [M], from memory). */
export const PROBE_DISCONNECTED_C = -127;

/** One counted check-in's readings (null: the logger did not report that value). */
export type FirstReading = { at: string; busV: number | null; currentA: number | null; powerW: number | null; tempC: number | null };

/** The figures the check compares with, kept with its verdict. */
export type CommissioningFigures = {
  /** The measurement profile version the readings were made under. */
  profileVersion: number;
  /** Voc,max: the panel's open-circuit voltage at the site's lowest temperature (lib/calibration.ts coldVoc). */
  vocMaxV: number;
  vocBasis: 'coefficient' | 'table' | 'nameplate';
  /** One sentence on how Voc,max was found. */
  vocNote: string;
  panelVocV: number;
  vocTempCoeffPctPerC: number | null;
  siteMinTempC: number | null;
  /** The profile's current and power steps, A and W. */
  currentLsbA: number;
  powerLsbW: number;
  /** The chip's bus voltage step, V. */
  busLsbV: number;
};

/** One failing reading of an item: which check-in (1-based), what it read, and why that is wrong. */
export type ItemFailure = { reading: number; found: string; why: string };

export type ItemResult = {
  item: CommissioningItem;
  ok: boolean;
  /** The rule in figures, e.g. "0 V to 24.64 V". */
  rule: string;
  failures: ItemFailure[];
  /** What to look at when it failed, in plain words for the installer; null when it passed. */
  lookAt: string | null;
};

export type CommissioningVerdict = {
  state: CommissioningState;
  /** Readings counted so far (at most FIRST_READINGS_COUNTED). */
  counted: number;
  needed: number;
  /** Every item, in COMMISSIONING_ITEMS order, judged on the readings counted so far. */
  items: ItemResult[];
};

/** Removes binary noise from sums and products of decimals, so a boundary case lands exactly on its bound. */
const tidy = (x: number) => Number(x.toPrecision(12));
const fmt = (x: number, unit: string) => `${x < 0 ? '−' : ''}${Math.abs(tidy(x))} ${unit}`;
const amps = (a: number) => (Math.abs(a) < 1 ? fmt(a * 1000, 'mA') : fmt(a, 'A'));
const watts = (w: number) => (Math.abs(w) < 1 && w !== 0 ? fmt(w * 1000, 'mW') : fmt(w, 'W'));
const volts = (v: number) => (v < 0 ? `−${formatVolts(-v)}` : formatVolts(v));
const celsius = (c: number) => `${c > 0 ? '+' : ''}${fmt(c, '°C')}`;

const NOT_REPORTED = 'not reported';

/** Each item as the logger page, the sheet and the activity log name it. */
export const COMMISSIONING_ITEM_NAMES: Record<CommissioningItem, string> = {
  bus_voltage: 'Panel voltage',
  current: 'Current direction',
  probe: 'Temperature probe',
  power: 'Power = voltage × current',
};

const LOOK_AT: Record<CommissioningItem, string> = {
  bus_voltage:
    'Check that the logger measures the one panel entered at enrollment (a string of several panels gives more voltage), ' +
    "and that the open-circuit voltage was typed from the panel's label. Correct the figures with Change profile, or rewire.",
  current:
    'The shunt is probably wired the wrong way round. Isolate the array first, then swap the two leads at the shunt ' +
    '(or the two sense wires to the logger), and start the check again.',
  probe:
    "Check the temperature probe's plug and its three wires. +85 °C is the value it holds before its first measurement: " +
    'seen again and again, the probe is losing its supply or its data line. −127 °C means the probe does not answer at all.',
  power:
    "The logger's power does not agree with its voltage times its current: it may not run the measurement profile shown here. " +
    'Wait for its next check-in; if it persists, change the profile again or have the logger checked on the bench.',
};

type Judge = { rule: string; check: (r: FirstReading) => { found: string; why: string } | null };

function judges(f: CommissioningFigures): Record<CommissioningItem, Judge> {
  return {
    // The bus sees the panel: never below 0 V, never above the open-circuit voltage in the cold (NEC 2023 690.7(A), §14).
    bus_voltage: {
      rule: `0 V to ${formatVolts(f.vocMaxV)}`,
      check: ({ busV }) => {
        if (busV === null) return { found: NOT_REPORTED, why: 'the logger sent no panel voltage' };
        if (busV < 0) return { found: volts(busV), why: 'below 0 V' };
        if (busV > f.vocMaxV) return { found: volts(busV), why: `above ${formatVolts(f.vocMaxV)}, the most this panel gives at the site's lowest temperature` };
        return null;
      },
    },
    // A shunt wired backwards makes the current negative. One current step below zero is allowed for a
    // reading at night, when the chip's offset may tip a zero current to −1 step (our rule).
    current: {
      rule: `not below −${amps(f.currentLsbA)} (one current step)`,
      check: ({ currentA }) => {
        if (currentA === null) return { found: NOT_REPORTED, why: 'the logger sent no current' };
        if (currentA < -f.currentLsbA) return { found: amps(currentA), why: 'negative: the current flows backwards through the shunt' };
        return null;
      },
    },
    // The probe's power-on value, the disconnected code and its rated range (docs/SOURCES.md §9).
    probe: {
      rule: `${celsius(PROBE_MIN_C)} to ${celsius(PROBE_MAX_C)}, not exactly ${celsius(PROBE_POWER_ON_C)} or ${celsius(PROBE_DISCONNECTED_C)}`,
      check: ({ tempC }) => {
        if (tempC === null) return { found: NOT_REPORTED, why: 'the logger sent no temperature' };
        if (tempC === PROBE_POWER_ON_C) return { found: celsius(tempC), why: "the temperature probe's power-on value: no measurement was made" };
        if (tempC === PROBE_DISCONNECTED_C) return { found: celsius(tempC), why: 'the temperature probe did not answer' };
        if (tempC < PROBE_MIN_C || tempC > PROBE_MAX_C) return { found: celsius(tempC), why: "outside the temperature probe's range" };
        return null;
      },
    },
    // Power = voltage × current (Eq. 4, §8), each reading within one of its steps: the power step, the current
    // step at the bus voltage, and the bus step at the current (error of a product of stepped values, §8 [D]).
    power: {
      rule: 'power within one step of voltage × current',
      check: ({ busV, currentA, powerW }) => {
        if (powerW === null) return { found: NOT_REPORTED, why: 'the logger sent no power' };
        if (busV === null || currentA === null) return { found: watts(powerW), why: 'cannot be compared: voltage or current not reported' };
        const product = tidy(busV * currentA);
        const allowed = tidy(f.powerLsbW + Math.abs(busV) * f.currentLsbA + Math.abs(currentA) * f.busLsbV);
        const off = tidy(Math.abs(powerW - product));
        if (off > allowed) {
          return { found: `${watts(powerW)} against ${watts(product)}`, why: `${watts(off)} apart; at most ${watts(allowed)} is explained by the measurement steps` };
        }
        return null;
      },
    },
  };
}

/** The rule for each item in figures, for the sheet (the same words the verdict uses). */
export function commissioningRules(figures: CommissioningFigures): Record<CommissioningItem, string> {
  const all = judges(figures);
  return Object.fromEntries(COMMISSIONING_ITEMS.map((item) => [item, all[item].rule])) as Record<CommissioningItem, string>;
}

/**
 * Judges the first readings: every item on every counted reading. Failed as soon as one item fails on one
 * reading; passed once FIRST_READINGS_COUNTED readings are all good; waiting before that.
 */
export function commissioningCheck(figures: CommissioningFigures, readings: readonly FirstReading[]): CommissioningVerdict {
  const counted = readings.slice(0, FIRST_READINGS_COUNTED);
  const all = judges(figures);
  const items = COMMISSIONING_ITEMS.map((item): ItemResult => {
    const failures: ItemFailure[] = [];
    counted.forEach((r, i) => {
      const failed = all[item].check(r);
      if (failed) failures.push({ reading: i + 1, ...failed });
    });
    const ok = failures.length === 0;
    return { item, ok, rule: all[item].rule, failures, lookAt: ok ? null : LOOK_AT[item] };
  });
  const failed = items.some((i) => !i.ok);
  const state: CommissioningState = failed ? 'failed' : counted.length >= FIRST_READINGS_COUNTED ? 'passed' : 'waiting';
  return { state, counted: counted.length, needed: FIRST_READINGS_COUNTED, items };
}

/** The readings a check-in's `readings` object gives the check (absent values are null). */
export function firstReadingOf(at: string, r: { bus_v?: number; current_a?: number; power_w?: number; temp_c?: number }): FirstReading {
  const n = (x: number | undefined) => (typeof x === 'number' && Number.isFinite(x) ? x : null);
  return { at, busV: n(r.bus_v), currentA: n(r.current_a), powerW: n(r.power_w), tempC: n(r.temp_c) };
}

/**
 * The figures for a logger's check from its measurement profile, its panel and its site's lowest temperature,
 * or why there are none (the cold-weather voltage cannot be worked out: lib/calibration.ts coldVoc).
 */
export function commissioningFigures(
  profile: { version: number; currentLsbA: number; powerLsbW: number },
  panel: { panelVocV: number; vocTempCoeffPctPerC: number | null },
  siteMinTempC: number | null,
): CommissioningFigures | { error: string } {
  const cold = coldVoc(panel.panelVocV, panel.vocTempCoeffPctPerC, siteMinTempC);
  if ('error' in cold) return { error: cold.error };
  return {
    profileVersion: profile.version,
    vocMaxV: cold.vocMaxV,
    vocBasis: cold.basis,
    vocNote: cold.note,
    panelVocV: panel.panelVocV,
    vocTempCoeffPctPerC: panel.vocTempCoeffPctPerC,
    siteMinTempC,
    currentLsbA: profile.currentLsbA,
    powerLsbW: profile.powerLsbW,
    busLsbV: BUS_LSB_V,
  };
}
