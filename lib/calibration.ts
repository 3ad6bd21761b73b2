// Measurement profile maths for a logger's shunt-based power-monitor chip and its temperature probe.
// Pure: no I/O and no server-only imports, because the enrollment form runs the same function in the
// browser to show the computed values and the headroom while the integrator types.
import type { MeasurementProfile, TempResolutionBits } from '../schemas/loggers';

/** The power-monitor chip's fixed scaling constant of the calibration equation. */
export const CALIBRATION_CONSTANT = 0.00512;
/** The current register is 16-bit two's complement: 2^15 steps cover the positive range. */
export const CURRENT_STEPS = 2 ** 15;
/** The calibration register's top bit is unused, so the value must fit 15 bits. */
export const CALIBRATION_MIN = 1;
export const CALIBRATION_MAX = 32767;
/**
 * The shunt voltage register is 16-bit two's complement over ± full scale, so its largest code, 7FFFh, is
 * one step below full scale: 81.92 mV × 32767 / 32768 = 81.9175 mV on the usual chip. A shunt voltage at or
 * above full scale does not fit the register.
 */
export const SHUNT_REGISTER_MAX_CODE = 0x7fff;
/** Power LSB is a fixed multiple of the current LSB. */
export const POWER_LSB_PER_CURRENT_LSB = 25;

/** Maximum temperature conversion time of the probe at each resolution, in ms (the full time halves per bit dropped). */
export const probeConversionMs: Record<TempResolutionBits, number> = { 9: 93.75, 10: 187.5, 11: 375, 12: 750 };

/** What the calibration needs from the install details (a subset of `InstallDetails`). */
export type InstallForProfile = {
  shuntOhm: number;
  maxCurrentA: number;
  panelVocV: number;
  tempResolutionBits: number;
  /** The panel's temperature coefficient of Voc from its data sheet, %/°C (negative); optional. */
  vocTempCoeffPctPerC?: number | null;
  /** The site's lowest expected ambient temperature, °C; optional. */
  siteMinTempC?: number | null;
};

/** The words the screen and the server's refusal open with when the panel voltage is above the limit. */
export const ABOVE_RATING = "Above the logger's input rating — do not connect";

/** The limits of a model's measurement hardware. */
export type ModelLimits = {
  /** Highest voltage the chip's bus input may see, V. */
  busVMax: number;
  /** Shunt voltage at the chip's full scale, V (0.08192 for the usual chip). */
  shuntFullScaleV: number;
  /** Probe resolutions this model's firmware allows, in bits. */
  tempResolutions: readonly number[];
};

/** The profile as computed; the service adds the version when it stores it. */
export type ComputedProfile = Omit<MeasurementProfile, 'version'>;

export type HeadroomItem = { used: number; limit: number; text: string };
export type Headroom = { shuntFullScaleV: HeadroomItem; busV: HeadroomItem; text: string };

export type ProfileError = { path: 'shuntOhm' | 'maxCurrentA' | 'panelVocV' | 'tempResolutionBits'; message: string };

export type ProfileResult =
  | { ok: true; profile: ComputedProfile; headroom: Headroom; coldVoc: ColdVoc }
  // headroom is present whenever the numbers allow it, so the form can still show "100 mV of 81.92 mV".
  | { ok: false; errors: ProfileError[]; headroom?: Headroom; coldVoc?: ColdVoc };

/** What the wiring check compared with the panel voltage limit, and how it got there. */
export type ColdVoc = {
  /** The highest open-circuit voltage expected at the site, V. */
  vocMaxV: number;
  /** Voc,max / Voc,STC. */
  factor: number;
  /** coefficient: 1 + β × (Tmin − 25 °C); table: NEC 2023 Table 690.7(A); nameplate: no site temperature known. */
  basis: 'coefficient' | 'table' | 'nameplate';
  /** One sentence for the installer on how the figure was found (and what to add when it is the nameplate only). */
  note: string;
};

// ─── Number helpers ─────────────────────────────────────────────────────────

/**
 * A number as the decimal it prints as (0.002 → 2 × 10^-3), for exact arithmetic on what the person typed.
 * Binary floating point cannot hold 0.002 or 0.04096 exactly, so a quotient that is mathematically whole can
 * land a hair below it: 0.00512 / (0.000005 × 0.04096) is exactly 25000 but computes as 24999.999999999996,
 * and trunc would lose a whole count. A fixed epsilon would not do either: a genuine quotient such as
 * 0.00512 / (0.000001 × 0.162092) = 31586.99997… is within a relative 1e-9 of the next integer and must stay 31586.
 */
type Decimal = { digits: bigint; exponent: number };
function decimalOf(x: number): Decimal {
  const match = /^(\d+)(?:\.(\d+))?(?:e([+-]?\d+))?$/.exec(String(x));
  if (!match) throw new RangeError(`not a finite non-negative number: ${x}`);
  const fraction = match[2] ?? '';
  return { digits: BigInt(match[1] + fraction), exponent: Number(match[3] ?? 0) - fraction.length };
}
// BigInt() rather than 10n literals: the client bundle's transpiler settings need not know BigInt literals.
const ONE = BigInt(1);
const pow10 = (n: number) => BigInt(10) ** BigInt(n);

/** trunc(a / (b × c)) computed exactly on the decimals a, b, c (all positive). */
function truncQuotient(a: number, b: number, c: number): number {
  const [da, db, dc] = [decimalOf(a), decimalOf(b), decimalOf(c)];
  const shift = da.exponent - db.exponent - dc.exponent;
  const numerator = da.digits * (shift > 0 ? pow10(shift) : ONE);
  const denominator = db.digits * dc.digits * (shift < 0 ? pow10(-shift) : ONE);
  return Number(numerator / denominator);
}

/** Sign of (a × b − limit × numerator / denominator), exactly on the decimals (numerator, denominator whole). */
function compareProduct(a: number, b: number, limit: number, numerator = 1, denominator = 1): -1 | 0 | 1 {
  const [da, db, dl] = [decimalOf(a), decimalOf(b), decimalOf(limit)];
  const productExponent = da.exponent + db.exponent;
  const low = Math.min(productExponent, dl.exponent);
  const product = da.digits * db.digits * pow10(productExponent - low) * BigInt(denominator);
  const bound = dl.digits * pow10(dl.exponent - low) * BigInt(numerator);
  return product === bound ? 0 : product > bound ? 1 : -1;
}

/** Removes binary noise from a product of decimal values (25 × 0.0005 → 0.0125 exactly as written). */
function tidy(x: number): number {
  return Number(x.toPrecision(12));
}

/** "62.5 mV", "81.92 mV", "36 V": at most 4 significant digits (or `digits`), no trailing zeros. */
export function formatVolts(v: number, digits = 4): string {
  if (Math.abs(v) < 1) return `${Number((v * 1000).toPrecision(digits))} mV`;
  return `${Number(v.toPrecision(digits))} V`;
}

/** The largest shunt voltage the register holds (code 7FFFh) for a full scale: full scale × 32767 / 32768. */
export function shuntRegisterMaxV(shuntFullScaleV: number): number {
  return tidy((shuntFullScaleV * SHUNT_REGISTER_MAX_CODE) / (SHUNT_REGISTER_MAX_CODE + 1));
}

function formatAmps(a: number): string {
  if (Math.abs(a) < 1) return `${Number((a * 1000).toPrecision(4))} mA`;
  return `${Number(a.toPrecision(4))} A`;
}

const isPositive = (x: unknown): x is number => typeof x === 'number' && Number.isFinite(x) && x > 0;

// ─── The equations ──────────────────────────────────────────────────────────

/** Smallest current LSB that still covers the maximum expected current: max / 2^15. */
export function minimumCurrentLsb(maxCurrentA: number): number {
  return maxCurrentA / CURRENT_STEPS;
}

/**
 * The current LSB we program: the minimum rounded UP to the next value of the 1-2-5 series
 * (…, 100 µA, 200 µA, 500 µA, 1 mA, 2 mA, …). Round steps keep readings and the profile easy to
 * check by hand (the chip maker's own worked example uses 1 mA); the cost is at most 2.5× coarser
 * steps than the minimum, which still leaves 13 000 or more steps over the expected range.
 * Never below max / 2^15, or the top of the range would overflow the current register.
 */
export function convenientCurrentLsb(maxCurrentA: number): number {
  const minimum = minimumCurrentLsb(maxCurrentA);
  if (!isPositive(minimum)) throw new RangeError('maximum current must be a positive number');
  const decade = Math.floor(Math.log10(minimum));
  // Start one decade low: log10 of an exact power of ten may land a hair either side.
  for (let exponent = decade - 1; exponent <= decade + 1; exponent++) {
    for (const mantissa of [1, 2, 5]) {
      const candidate = Number(`${mantissa}e${exponent}`);
      if (candidate >= minimum) return candidate;
    }
  }
  return Number(`1e${decade + 2}`);
}

/**
 * Calibration register value: trunc(0.00512 / (current LSB × shunt)), computed exactly on the decimals
 * (see decimalOf). May fall outside 1…32767; callers check.
 */
export function calibrationFor(currentLsbA: number, shuntOhm: number): number {
  if (!isPositive(currentLsbA) || !isPositive(shuntOhm)) throw new RangeError('current LSB and shunt must be positive numbers');
  return truncQuotient(CALIBRATION_CONSTANT, currentLsbA, shuntOhm);
}

export function powerLsbFor(currentLsbA: number): number {
  return tidy(POWER_LSB_PER_CURRENT_LSB * currentLsbA);
}

/**
 * Sample interval: whole seconds, at least 1 s, and at least 4× the probe's conversion time, so the
 * probe converts at most a quarter of the time (its active current warms it and loads the logger's supply).
 * 9 and 10 bits → 1 s, 11 bits → 2 s, 12 bits → 3 s.
 */
export function sampleIntervalFor(tempResolutionBits: number): number {
  const conversionMs = probeConversionMs[tempResolutionBits as TempResolutionBits];
  if (conversionMs === undefined) throw new RangeError(`no probe conversion time for ${tempResolutionBits} bits`);
  return Math.max(1, Math.ceil((4 * conversionMs) / 1000));
}

// ─── Open-circuit voltage in the cold ───────────────────────────────────────

/** Standard test conditions' cell temperature, °C. */
export const STC_TEMP_C = 25;

/**
 * Correction factors for crystalline and multicrystalline silicon modules by the lowest expected ambient
 * temperature (NEC 2023 Table 690.7(A); docs/SOURCES.md §14 — values from memory). Each band is given by
 * its warmest and coldest whole degree; the factor applies down to `coldestC`.
 */
export const NEC_690_7_A_BANDS: readonly { warmestC: number; coldestC: number; factor: number }[] = [
  { warmestC: 24, coldestC: 20, factor: 1.02 },
  { warmestC: 19, coldestC: 15, factor: 1.04 },
  { warmestC: 14, coldestC: 10, factor: 1.06 },
  { warmestC: 9, coldestC: 5, factor: 1.08 },
  { warmestC: 4, coldestC: 0, factor: 1.1 },
  { warmestC: -1, coldestC: -5, factor: 1.12 },
  { warmestC: -6, coldestC: -10, factor: 1.14 },
  { warmestC: -11, coldestC: -15, factor: 1.16 },
  { warmestC: -16, coldestC: -20, factor: 1.18 },
  { warmestC: -21, coldestC: -25, factor: 1.2 },
  { warmestC: -26, coldestC: -30, factor: 1.21 },
  { warmestC: -31, coldestC: -35, factor: 1.23 },
  { warmestC: -36, coldestC: -40, factor: 1.25 },
];

/**
 * The table's factor for a lowest expected ambient temperature: 1 at 25 °C and above; between two bands'
 * whole degrees (19.5 °C) the colder band's, the safe side; null below −40 °C, where the table ends.
 */
export function necVocFactor(minTempC: number): number | null {
  if (!Number.isFinite(minTempC)) return null;
  if (minTempC >= STC_TEMP_C) return 1;
  for (const band of NEC_690_7_A_BANDS) if (minTempC >= band.coldestC) return band.factor;
  return null;
}

/**
 * Voc,max = Voc,STC × (1 + β × (Tmin − 25 °C)), β in %/°C (NEC 2023 690.7(A)(1), IEC 62548; docs/SOURCES.md §14);
 * never below the nameplate value, so a site warmer than 25 °C does not loosen the check.
 * Without β the table's factor is used; without Tmin only the nameplate value.
 */
export function coldVoc(vocStcV: number, vocTempCoeffPctPerC: number | null | undefined, siteMinTempC: number | null | undefined): ColdVoc | { error: string } {
  const hasTmin = typeof siteMinTempC === 'number' && Number.isFinite(siteMinTempC);
  if (!hasTmin) {
    return {
      vocMaxV: vocStcV,
      factor: 1,
      basis: 'nameplate',
      note:
        "Checked with the nameplate open-circuit voltage only: the site's lowest expected temperature is not known. " +
        'Panels give more voltage in the cold — add the lowest temperature to the site so the check allows for it.',
    };
  }
  const at = `${formatTemp(siteMinTempC)}`;
  if (typeof vocTempCoeffPctPerC === 'number' && Number.isFinite(vocTempCoeffPctPerC)) {
    const factor = Math.max(1, tidy(1 + (vocTempCoeffPctPerC / 100) * (siteMinTempC - STC_TEMP_C)));
    return {
      vocMaxV: tidy(vocStcV * factor),
      factor,
      basis: 'coefficient',
      note: `At ${at}, the site's lowest temperature, the panel gives ${formatVolts(vocStcV)} × ${factor} = ${formatVolts(tidy(vocStcV * factor))} (its coefficient ${vocTempCoeffPctPerC} %/°C).`,
    };
  }
  const factor = necVocFactor(siteMinTempC);
  if (factor === null) {
    return { error: `the site's lowest temperature ${at} is below the table of correction factors (it ends at −40 °C): give the panel's temperature coefficient of Voc from its data sheet` };
  }
  return {
    vocMaxV: tidy(vocStcV * factor),
    factor,
    basis: 'table',
    note: `At ${at}, the site's lowest temperature, the panel gives up to ${formatVolts(vocStcV)} × ${factor} = ${formatVolts(tidy(vocStcV * factor))} (the code table's factor for crystalline silicon; give the panel's coefficient for a closer figure).`,
  };
}

function formatTemp(c: number): string {
  return `${c < 0 ? '−' : ''}${Math.abs(c)} °C`;
}

/** The probe's step at each resolution, °C (its data sheet's resolution table; docs/SOURCES.md §9). */
export const probeStepC: Record<TempResolutionBits, number> = { 9: 0.5, 10: 0.25, 11: 0.125, 12: 0.0625 };

/** "0.0625 °C steps" for 12 bits. */
export function probeStepText(bits: number): string {
  const step = probeStepC[bits as TempResolutionBits];
  return step === undefined ? `${bits} bits` : `${step} °C steps`;
}

/** "0.0625 °C" for 12 bits: the words on a resolution choice, in the step an installer reads off the probe. */
export function probeStepChoice(bits: number): string {
  const step = probeStepC[bits as TempResolutionBits];
  return step === undefined ? `${bits} bits` : `${step} °C`;
}

function headroomFor(install: InstallForProfile, limits: ModelLimits, cold: ColdVoc | undefined): Headroom | undefined {
  if (!isPositive(install.shuntOhm) || !isPositive(install.maxCurrentA)) return undefined;
  if (!isPositive(limits.shuntFullScaleV) || !isPositive(limits.busVMax)) return undefined;
  const shuntUsed = tidy(install.maxCurrentA * install.shuntOhm);
  const shunt: HeadroomItem = {
    used: shuntUsed,
    limit: limits.shuntFullScaleV,
    text: `full scale ${formatVolts(shuntUsed)} of ${formatVolts(limits.shuntFullScaleV)}`,
  };
  const bus: HeadroomItem = {
    used: cold ? cold.vocMaxV : 0,
    limit: limits.busVMax,
    text: cold
      ? `panel ${formatVolts(cold.vocMaxV)}${cold.basis === 'nameplate' ? '' : ' in the cold'} of ${formatVolts(limits.busVMax)} panel voltage limit`
      : `panel voltage limit ${formatVolts(limits.busVMax)}`,
  };
  return { shuntFullScaleV: shunt, busV: bus, text: `${shunt.text}; ${bus.text}` };
}

/**
 * The measurement profile for an install, or every reason it cannot work, each naming the limit.
 * All checks run, so the integrator sees every problem at once.
 */
export function measurementProfile(install: InstallForProfile, modelLimits: ModelLimits): ProfileResult {
  if (!isPositive(modelLimits.shuntFullScaleV) || !isPositive(modelLimits.busVMax)) {
    throw new RangeError('the model\'s measurement limits must be positive numbers');
  }
  const errors: ProfileError[] = [];
  const { shuntOhm, maxCurrentA, panelVocV, tempResolutionBits } = install;

  if (!isPositive(shuntOhm)) errors.push({ path: 'shuntOhm', message: 'shunt resistance must be a number above 0 Ω' });
  if (!isPositive(maxCurrentA)) errors.push({ path: 'maxCurrentA', message: 'maximum expected current must be a number above 0 A' });
  if (!isPositive(panelVocV)) errors.push({ path: 'panelVocV', message: 'panel open-circuit voltage must be a number above 0 V' });

  let currentLsbA: number | undefined;
  let calibration: number | undefined;
  if (isPositive(shuntOhm) && isPositive(maxCurrentA)) {
    const fullScaleV = tidy(maxCurrentA * shuntOhm);
    // Allowed up to the register's top code (7FFFh), one step below the full scale.
    if (compareProduct(maxCurrentA, shuntOhm, modelLimits.shuntFullScaleV, SHUNT_REGISTER_MAX_CODE, SHUNT_REGISTER_MAX_CODE + 1) > 0) {
      errors.push({
        path: 'shuntOhm',
        message:
          `shunt voltage at ${formatAmps(maxCurrentA)} would be ${formatVolts(fullScaleV, 6)}; the power-monitor chip measures ` +
          `at most ${formatVolts(shuntRegisterMaxV(modelLimits.shuntFullScaleV), 6)} (its register's top code, just under the ` +
          `${formatVolts(modelLimits.shuntFullScaleV)} full scale) — use a smaller shunt or a lower maximum current`,
      });
    }
    currentLsbA = convenientCurrentLsb(maxCurrentA);
    calibration = calibrationFor(currentLsbA, shuntOhm);
    if (calibration > CALIBRATION_MAX) {
      errors.push({
        path: 'maxCurrentA',
        message:
          `calibration would be ${calibration}; the power-monitor chip's calibration register holds ` +
          `${CALIBRATION_MIN} to ${CALIBRATION_MAX} — the shunt voltage at full scale (${formatVolts(fullScaleV)}) is too small: ` +
          'use a larger shunt or a higher maximum current',
      });
    } else if (calibration < CALIBRATION_MIN) {
      errors.push({
        path: 'maxCurrentA',
        message:
          `calibration would be ${calibration}; the power-monitor chip's calibration register holds ` +
          `${CALIBRATION_MIN} to ${CALIBRATION_MAX} — use a smaller shunt or a lower maximum current`,
      });
    }
  }

  // The panel voltage limit is checked against the open-circuit voltage in the cold (NEC 2023 690.7(A); docs/SOURCES.md §14).
  let cold: ColdVoc | undefined;
  if (isPositive(panelVocV)) {
    const found = coldVoc(panelVocV, install.vocTempCoeffPctPerC, install.siteMinTempC);
    if ('error' in found) {
      errors.push({ path: 'panelVocV', message: found.error });
    } else {
      cold = found;
      if (found.vocMaxV > modelLimits.busVMax) {
        const how = found.basis === 'nameplate' ? `panel open-circuit voltage ${formatVolts(panelVocV)}` : `panel open-circuit voltage in the cold ${formatVolts(found.vocMaxV)} (${formatVolts(panelVocV)} × ${found.factor})`;
        errors.push({
          path: 'panelVocV',
          message:
            `${ABOVE_RATING}: ${how} is above this model's panel voltage limit of ${formatVolts(modelLimits.busVMax)}; ` +
            'the power-monitor chip must never see more — wire a panel or string with a lower open-circuit voltage',
        });
      }
    }
  }

  const allowed = modelLimits.tempResolutions;
  if (!allowed.includes(tempResolutionBits) || probeConversionMs[tempResolutionBits as TempResolutionBits] === undefined) {
    const choices = allowed.filter((bits) => probeConversionMs[bits as TempResolutionBits] !== undefined);
    errors.push({
      path: 'tempResolutionBits',
      message: `probe resolution ${tempResolutionBits} bits is not available on this model; choose ${listChoices(choices)} bits`,
    });
  }

  const headroom = headroomFor(install, modelLimits, cold);
  if (errors.length > 0 || currentLsbA === undefined || calibration === undefined || headroom === undefined || cold === undefined) {
    return { ok: false, errors, ...(headroom ? { headroom } : {}), ...(cold ? { coldVoc: cold } : {}) };
  }
  return {
    ok: true,
    coldVoc: cold,
    profile: {
      shuntOhm,
      maxCurrentA,
      currentLsbA,
      calibration,
      powerLsbW: powerLsbFor(currentLsbA),
      busVMax: modelLimits.busVMax,
      tempResolutionBits: tempResolutionBits as TempResolutionBits,
      sampleIntervalS: sampleIntervalFor(tempResolutionBits),
    },
    headroom,
  };
}

function listChoices(values: readonly number[]): string {
  const sorted = [...values].sort((a, b) => a - b).map(String);
  if (sorted.length === 0) return 'a resolution the model lists (it lists none; ask an admin to fix the model)';
  if (sorted.length === 1) return sorted[0];
  return `${sorted.slice(0, -1).join(', ')} or ${sorted[sorted.length - 1]}`;
}

// ─── Temperature probe readings ─────────────────────────────────────────────

/**
 * The temperature register (16-bit two's complement, 1/16 °C per count) at the probe's resolution. Below
 * 12 bits the lowest bits are undefined and are cleared before decoding: bit 0 at 11 bits, bits 1–0 at
 * 10 bits, bits 2–0 at 9 bits (0.125, 0.25 and 0.5 °C steps).
 */
export function decodeProbeRaw(raw16: number, resolutionBits: TempResolutionBits): ProbeReading {
  if (!Number.isInteger(raw16) || raw16 < 0 || raw16 > 0xffff) {
    throw new RangeError(`a probe register value is 0 to 0xFFFF, got ${raw16}`);
  }
  if (probeConversionMs[resolutionBits] === undefined) throw new RangeError(`a probe resolution is 9 to 12 bits, got ${resolutionBits}`);
  // FFFFh is what a 1-Wire read returns when nothing answers (the bus idles high): no temperature at all,
  // though as a number it would read −0.0625 °C.
  if (raw16 === 0xffff) return { tempC: null, fault: 'open_bus' };
  const masked = raw16 & (0xffff << (12 - resolutionBits)) & 0xffff;
  const signed = masked >= 0x8000 ? masked - 0x10000 : masked;
  const tempC = signed / 16;
  return { tempC, fault: probeReadingFault(tempC) };
}

export type ProbeFault = 'power_on_value' | 'out_of_range' | 'open_bus';

/** A decoded probe register: the temperature (null when the register holds none) and why not to trust it, if so. */
export type ProbeReading = { tempC: number | null; fault: ProbeFault | null };

export const PROBE_MIN_C = -55;
export const PROBE_MAX_C = 125;
/** The temperature register holds this value after power-on until the first conversion ends. */
export const PROBE_POWER_ON_C = 85;

/**
 * Why a reading is not to be trusted, or null. Exactly 85.0 °C is the power-on value (a read before the
 * conversion finished, or after a brown-out) — a real 85 °C is possible on a hot panel but rare enough
 * that the fleet view flags it for a look.
 */
export function probeReadingFault(tempC: number): ProbeFault | null {
  if (tempC === PROBE_POWER_ON_C) return 'power_on_value';
  if (!Number.isFinite(tempC) || tempC < PROBE_MIN_C || tempC > PROBE_MAX_C) return 'out_of_range';
  return null;
}
