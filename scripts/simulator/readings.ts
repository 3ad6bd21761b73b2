// What a virtual logger measures: a PV panel in Aldmere Vale (about 52° N) under a clear-sky sun with
// passing cloud, the panel's temperature, and the board's own supply with its brown-outs.
// Pure: no I/O; the time and the randomness come in as arguments.
//
// The models are the usual first approximations of the trade, chosen to look right on a dashboard,
// not to size a plant:
// - The sky (sun position, clear-sky light, expected air temperature) from lib/solar.ts, which the
//   measurement-drift trip rule reads too: Kasten & Young (1989) air mass, Meinel & Meinel (1976) beam.
// - A south-facing panel tilted 35°; plane-of-array light from the angle of incidence.
// - Panel current proportional to irradiance, voltage near the maximum-power point falling
//   logarithmically in dim light and by 0.35 %/K with cell temperature (common practice for
//   crystalline silicon); cell temperature by the NOCT model, Ta + G × (NOCT − 20) / 800 with NOCT 45 °C.
import { airMass, ambientTemperatureC, clearSkyIrradiance, type Spot } from '../../lib/solar';
import { gaussian, poisson, type Random } from './random';

export { airMass, ambientTemperatureC, clearSkyIrradiance, type Spot };

export type Panel = {
  /** Rated power at 1000 W/m² and 25 °C cell temperature (standard test conditions). */
  wattsPeak: number;
  /** Open-circuit voltage at standard test conditions. */
  vocV: number;
  /** Voltage at the maximum-power point at standard test conditions. */
  vmpV: number;
  tiltDeg: number;
  /** Compass direction the panel faces, degrees clockwise from north (180 = south, as suncalc measures the Sun). */
  azimuthDeg: number;
};

/** A 12 V-class panel of 36 cells, as the Vale's loggers mostly watch. */
export function typicalPanel(wattsPeak: number): Panel {
  return { wattsPeak, vocV: 22.0, vmpV: 18.0, tiltDeg: 35, azimuthDeg: 180 };
}

const NOCT_C = 45;
const VOLTAGE_TEMP_COEFF_PER_K = -0.0035;
const CURRENT_TEMP_COEFF_PER_K = 0.0005;
/** How fast the maximum-power voltage falls in dim light: V = Vmp × (1 + k·ln(G / 1000)). */
const DIM_LIGHT_VOLTAGE_SLOPE = 0.06;

/** Cell temperature by the NOCT model. */
export function panelTemperatureC(ambientC: number, irradianceWm2: number): number {
  return ambientC + (irradianceWm2 * (NOCT_C - 20)) / 800;
}

export type PanelOutput = { busV: number; currentA: number; powerW: number };

/** The panel working at its maximum-power point for a given light and cell temperature. */
export function panelOutput(panel: Panel, irradianceWm2: number, cellTempC: number): PanelOutput {
  if (irradianceWm2 <= 0) return { busV: 0, currentA: 0, powerW: 0 };
  const g = irradianceWm2 / 1000;
  const warm = cellTempC - 25;
  const busV = Math.min(
    panel.vocV,
    Math.max(0, panel.vmpV * (1 + DIM_LIGHT_VOLTAGE_SLOPE * Math.log(g)) * (1 + VOLTAGE_TEMP_COEFF_PER_K * warm)),
  );
  const currentA = busV > 0 ? (panel.wattsPeak / panel.vmpV) * g * (1 + CURRENT_TEMP_COEFF_PER_K * warm) : 0;
  return { busV, currentA, powerW: busV * currentA };
}

/** The measurement profile a logger runs (DEVICE_API.md `config`), as far as readings use it. */
export type ReadingProfile = {
  max_current_a: number;
  current_lsb_a: number;
  power_lsb_w: number;
  bus_v_max: number;
  temp_resolution_bits: number;
};

/** Bus voltage register step of the power monitor (1.25 mV) and the probe's 9-bit step (0.5 °C). */
const BUS_LSB_V = 0.00125;
const PROBE_9_BIT_STEP_C = 0.5;

const quantize = (value: number, step: number) => (step > 0 ? Math.round(value / step) * step : value);
const round = (value: number, digits: number) => Number(value.toFixed(digits));

export type Readings = { bus_v: number; current_a: number; power_w: number; energy_wh: number; temp_c: number };

/**
 * The panel as one logger sees it: passing cloud, energy counted since the logger's last boot, and
 * readings stepped to the measurement profile's resolution once the logger has one.
 */
export class PanelMeter {
  readonly panel: Panel;
  readonly spot: Spot;
  private readonly random: Random;
  /** Share of clear-sky light getting through the cloud, 0.1–1; wanders slowly. */
  private clearness: number;
  private at: Date;
  private energyWh = 0;
  private last: PanelOutput & { tempC: number };
  /**
   * What the firmware multiplies the measured current by: 1 for a correct calibration. A release that
   * breaks the measurement code (`npm run simulate -- --drift 0.5`) scales the current, and with it the
   * power and the energy counted, as a wrong current LSB would.
   */
  currentScale = 1;

  constructor(options: { panel: Panel; spot: Spot; random: Random; at: Date; clearness?: number }) {
    this.panel = options.panel;
    this.spot = options.spot;
    this.random = options.random;
    this.clearness = options.clearness ?? 0.5 + 0.5 * this.random();
    this.at = options.at;
    this.last = this.sample(options.at);
  }

  /** The panel at an instant, under the present cloud. */
  sample(at: Date): PanelOutput & { tempC: number; irradianceWm2: number } {
    const irradianceWm2 = clearSkyIrradiance(at, this.spot, this.panel) * this.clearness;
    const tempC = panelTemperatureC(ambientTemperatureC(at, this.spot), irradianceWm2);
    return { ...panelOutput(this.panel, irradianceWm2, tempC), tempC, irradianceWm2 };
  }

  /** Moves the meter to `to`, counting energy in five-minute steps (trapezoid rule). */
  advance(to: Date, fixedClearness = false): void {
    const stepMs = 5 * 60_000;
    let t = this.at.getTime();
    const end = to.getTime();
    let previous = this.last;
    while (t < end) {
      const next = Math.min(end, t + stepMs);
      if (!fixedClearness) this.wander((next - t) / 60_000);
      const now = this.sample(new Date(next));
      this.energyWh += ((previous.powerW + now.powerW) / 2) * this.currentScale * ((next - t) / 3_600_000);
      previous = now;
      t = next;
    }
    this.at = new Date(Math.max(end, this.at.getTime()));
    this.last = previous;
  }

  private wander(minutes: number): void {
    // A mean-reverting walk: clouds come and go over tens of minutes.
    const pull = 0.02 * minutes * (0.75 - this.clearness);
    this.clearness = Math.min(1, Math.max(0.1, this.clearness + pull + gaussian(this.random, 0, 0.03 * Math.sqrt(minutes))));
  }

  /** The logger rebooted: its energy counter starts again from zero. */
  reboot(): void {
    this.energyWh = 0;
  }

  get energySinceBootWh(): number {
    return this.energyWh;
  }

  /** The check-in's `readings`, stepped to the profile's resolution when the logger has one. */
  readings(profile: ReadingProfile | null): Readings {
    const { busV, currentA, tempC } = this.last;
    let bus = busV;
    let current = currentA * this.currentScale;
    let temp = tempC;
    if (profile) {
      bus = quantize(Math.min(bus, profile.bus_v_max), BUS_LSB_V);
      current = quantize(Math.min(current, profile.max_current_a), profile.current_lsb_a);
      const bits = Math.min(12, Math.max(9, Math.round(profile.temp_resolution_bits)));
      temp = quantize(temp, PROBE_9_BIT_STEP_C / 2 ** (bits - 9));
    }
    const power = profile ? quantize(bus * current, profile.power_lsb_w) : bus * current;
    return {
      bus_v: round(bus, 5),
      current_a: round(current, 6),
      power_w: round(power, 5),
      energy_wh: round(this.energyWh, 4),
      temp_c: round(temp, 4),
    };
  }
}

/** How a board revision's supply behaves (PRODUCT.md: A is the original, B added bulk capacitors, C a switching regulator). */
export type BoardSupply = {
  /** Typical supply at the board input, V. */
  nominalV: number;
  /** Spread from reading to reading, V (one standard deviation). */
  spreadV: number;
  /** Brown-out resets per hour while the supply is normal. */
  brownoutsPerHour: number;
  /** Watchdog resets per hour (firmware faults, rare on every board). */
  watchdogsPerHour: number;
};

export const boardSupplies: Record<string, BoardSupply> = {
  A: { nominalV: 4.72, spreadV: 0.06, brownoutsPerHour: 0.02, watchdogsPerHour: 0.0005 },
  B: { nominalV: 5.04, spreadV: 0.03, brownoutsPerHour: 0.002, watchdogsPerHour: 0.0005 },
  C: { nominalV: 5.0, spreadV: 0.01, brownoutsPerHour: 0.0005, watchdogsPerHour: 0.0005 },
};

/** Below this the supply is sagging and brown-outs become five times as likely (board behaviour, invented for the demo). */
export const SAG_V = 4.6;

export type ResetReason = 'power_on' | 'watchdog' | 'brownout' | 'software' | 'exception' | 'external' | 'unknown';

/** The supply reading at a check-in and the resets since the previous one (by the board's behaviour, unless one is given). */
export function supplyBetweenCheckIns(
  board: string,
  hours: number,
  random: Random,
  behaviour: BoardSupply = boardSupplies[board] ?? boardSupplies.B,
): { supplyV: number; resets: Partial<Record<ResetReason, number>> } {
  const supplyV = Math.max(0, gaussian(random, behaviour.nominalV, behaviour.spreadV));
  const sagging = supplyV < SAG_V;
  const resets: Partial<Record<ResetReason, number>> = {};
  const brownouts = poisson(random, behaviour.brownoutsPerHour * (sagging ? 5 : 1), hours);
  const watchdogs = poisson(random, behaviour.watchdogsPerHour, hours);
  if (brownouts > 0) resets.brownout = brownouts;
  if (watchdogs > 0) resets.watchdog = watchdogs;
  return { supplyV: Number(supplyV.toFixed(3)), resets };
}
