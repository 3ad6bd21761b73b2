// The sky over a site, as Heliodor models it: clear-sky light on a panel's plane and the expected air
// temperature. Pure: no I/O; the time comes in as an argument. The fleet simulator's panels
// (scripts/simulator/readings.ts) and the measurement-drift trip rule (server/rollout/drift.ts) share
// it, so the energy the rule expects is the light the simulated panels see on a clear day.
//
// - Sun position from the suncalc package (a maintained solar-position library).
// - Air mass by Kasten & Young (1989); clear-sky direct beam by Meinel & Meinel (1976),
//   1353 W/m² × 0.7^(AM^0.678); diffuse light 10 % of the beam (common practice). docs/SOURCES.md §21.
// - Plane-of-array light from the angle of incidence on a tilted panel.
import { getPosition } from 'suncalc';

export type Spot = { latitude: number; longitude: number };

/** How a panel is mounted: tilt from horizontal, and the compass direction it faces (degrees clockwise from north). */
export type Mounting = { tiltDeg: number; azimuthDeg: number };

/** The usual mounting of the Vale's loggers' panels: facing south, tilted 35°. */
export const TYPICAL_MOUNTING: Mounting = { tiltDeg: 35, azimuthDeg: 180 };

const DEG = Math.PI / 180;
export const SOLAR_CONSTANT_W_M2 = 1353;

/** Relative optical air mass (Kasten & Young 1989) at a solar altitude in degrees above the horizon. */
export function airMass(altitudeDeg: number): number {
  if (altitudeDeg <= 0) return Infinity;
  return 1 / (Math.sin(altitudeDeg * DEG) + 0.50572 * Math.pow(altitudeDeg + 6.07995, -1.6364));
}

/** Clear-sky direct beam at normal incidence, W/m² (Meinel & Meinel 1976), at a solar altitude in degrees. */
export function clearSkyBeam(altitudeDeg: number): number {
  if (!(altitudeDeg > 0)) return 0;
  return SOLAR_CONSTANT_W_M2 * Math.pow(0.7, Math.pow(airMass(altitudeDeg), 0.678));
}

/** Clear-sky light on the panel's plane in W/m² (0 when the Sun is down). */
export function clearSkyIrradiance(at: Date, spot: Spot, mounting: Mounting = TYPICAL_MOUNTING): number {
  // suncalc 2 gives altitude and azimuth in degrees, azimuth clockwise from north.
  const sun = getPosition(at, spot.latitude, spot.longitude);
  const altitudeDeg = sun.altitude;
  if (!(altitudeDeg > 0)) return 0;
  const altitude = altitudeDeg * DEG;
  const beam = clearSkyBeam(altitudeDeg);
  const tilt = mounting.tiltDeg * DEG;
  const cosIncidence =
    Math.sin(altitude) * Math.cos(tilt) + Math.cos(altitude) * Math.sin(tilt) * Math.cos((sun.azimuth - mounting.azimuthDeg) * DEG);
  const diffuse = 0.1 * beam * ((1 + Math.cos(tilt)) / 2);
  return Math.max(0, beam * Math.max(0, cosIncidence) + diffuse);
}

/** The step the light is summed in (the simulated panels count their energy in the same steps). */
export const INSOLATION_STEP_MS = 5 * 60_000;

/**
 * Clear-sky insolation on the panel's plane between two instants, Wh/m²: the trapezoid rule over
 * five-minute steps (the last one shorter). 0 when `to` is not after `from`.
 */
export function clearSkyInsolationWh(from: Date, to: Date, spot: Spot, mounting: Mounting = TYPICAL_MOUNTING): number {
  let t = from.getTime();
  const end = to.getTime();
  if (!(end > t)) return 0;
  let previous = clearSkyIrradiance(from, spot, mounting);
  let sum = 0;
  while (t < end) {
    const next = Math.min(end, t + INSOLATION_STEP_MS);
    const now = clearSkyIrradiance(new Date(next), spot, mounting);
    sum += ((previous + now) / 2) * ((next - t) / 3_600_000);
    previous = now;
    t = next;
  }
  return sum;
}

/**
 * Expected air temperature in the Vale (°C): a seasonal mean from about 4 °C in January to 17 °C in July
 * and a daily swing peaking mid-afternoon (climate of lowland England at 52° N, from memory).
 */
export function ambientTemperatureC(at: Date, spot: Spot): number {
  const start = Date.UTC(at.getUTCFullYear(), 0, 1);
  const dayOfYear = (at.getTime() - start) / 86_400_000;
  const seasonal = 10.5 - 6.5 * Math.cos((2 * Math.PI * (dayOfYear - 20)) / 365.25);
  const swing = 5 - 1.5 * Math.cos((2 * Math.PI * (dayOfYear - 20)) / 365.25);
  // Local mean solar time from the longitude (15° an hour); the equation of time (a quarter of an hour
  // at most) does not matter for air temperature, and it spares a sunrise computation per sample.
  const solarHour = (((at.getTime() / 3_600_000 + spot.longitude / 15) % 24) + 24) % 24;
  const hoursFromNoon = solarHour - 12;
  return seasonal + swing * Math.cos((2 * Math.PI * (hoursFromNoon - 2.5)) / 24);
}
