// Daylight window (DEVICE_API.md "Who gets an offer", rule 5). Pure: the clock is passed in.
//
// A logger runs from its PV panel; an install started in full daylight keeps its supply up through the
// download, the flash write and the reboot. The window is sunrise + 1 h … sunset − 1 h at the site,
// both ends included, with sunrise and sunset from the suncalc package (solar position from latitude
// and longitude, the standard −0.833° rise/set altitude).
import { getPosition, getTimes } from 'suncalc';

export const DAYLIGHT_MARGIN_MS = 60 * 60 * 1000;

/**
 * The window for the solar day nearest to `now` at the site. suncalc anchors its times to the local
 * solar noon nearest the given instant, so the window found is the only one that could contain `now`.
 *
 * Polar day and polar night (the Sun never crosses the rise/set altitude, suncalc gives no sunrise):
 * in polar day the panel sees the Sun round the clock, so the window is open all day; in polar night
 * it is closed all day. We choose this rather than "window off" because the window exists to protect
 * the supply, and the Sun's position is what protects it.
 */
export type DaylightWindow =
  | { kind: 'window'; opens: Date; closes: Date; sunrise: Date; sunset: Date }
  | { kind: 'polar_day' }
  | { kind: 'polar_night' };

function validDate(d: unknown): Date | null {
  return d instanceof Date && !Number.isNaN(d.getTime()) ? d : null;
}

export function daylightWindowAt(now: Date, latitude: number, longitude: number): DaylightWindow {
  const times = getTimes(now, latitude, longitude);
  // suncalc 2 reports a missing sunrise as null with alwaysUp/alwaysDown; older releases gave an
  // Invalid Date. Both mean the Sun does not cross the horizon on this day.
  const sunrise = validDate(times.sunrise);
  const sunset = validDate(times.sunset);
  if (!sunrise || !sunset) {
    // Without the alwaysUp flag (older suncalc), the Sun's altitude now tells which side it stays on.
    const up = typeof times.alwaysUp === 'boolean' ? times.alwaysUp : getPosition(now, latitude, longitude).altitude > 0;
    return up ? { kind: 'polar_day' } : { kind: 'polar_night' };
  }
  return {
    kind: 'window',
    sunrise,
    sunset,
    opens: new Date(sunrise.getTime() + DAYLIGHT_MARGIN_MS),
    closes: new Date(sunset.getTime() - DAYLIGHT_MARGIN_MS),
  };
}

/** True between sunrise + 1 h and sunset − 1 h at the site (ends included); see daylightWindowAt for polar days. */
export function inDaylightWindow(now: Date, latitude: number, longitude: number): boolean {
  const window = daylightWindowAt(now, latitude, longitude);
  if (window.kind === 'polar_day') return true;
  if (window.kind === 'polar_night') return false;
  const t = now.getTime();
  // A day shorter than two hours has opens after closes: the window is then empty.
  return t >= window.opens.getTime() && t <= window.closes.getTime();
}
