import { daylightWindowAt, inDaylightWindow } from '../../server/rollout/daylight';

// Reference: NOAA Global Monitoring Laboratory's Solar Calculator equations (the "General Solar Position
// Calculations" behind its NOAA_Solar_Calculations_day spreadsheet, after Jean Meeus, "Astronomical
// Algorithms"), implemented below on their own — not the library the code calls. NOAA gives their accuracy
// as about a minute for latitudes within ±72°; the checks allow 2 minutes between the two computations and
// test the window's edges 3 minutes either side. The window rule itself — sunrise + 1 h … sunset − 1 h —
// is DEVICE_API.md "Who gets an offer", rule 5.
// Site: the demo area of Aldmere Vale (PRODUCT.md), about 52.14° N, 1.98° W.
const VALE = { latitude: 52.14, longitude: -1.98 };
const MINUTE = 60_000;
const HOUR = 60 * MINUTE;
const DAY = 24 * HOUR;

const rad = (deg: number) => (deg * Math.PI) / 180;
const deg = (r: number) => (r * 180) / Math.PI;

/** NOAA's solar quantities at an instant: declination (degrees) and the equation of time (minutes). */
function noaaSun(ms: number) {
  const julianDay = ms / DAY + 2440587.5;
  const T = (julianDay - 2451545) / 36525; // Julian century
  const L0 = (((280.46646 + T * (36000.76983 + T * 0.0003032)) % 360) + 360) % 360; // geometric mean longitude
  const M = 357.52911 + T * (35999.05029 - 0.0001537 * T); // geometric mean anomaly
  const e = 0.016708634 - T * (0.000042037 + 0.0000001267 * T); // eccentricity of Earth's orbit
  const C = Math.sin(rad(M)) * (1.914602 - T * (0.004817 + 0.000014 * T)) + Math.sin(rad(2 * M)) * (0.019993 - 0.000101 * T) + Math.sin(rad(3 * M)) * 0.000289;
  const apparentLongitude = L0 + C - 0.00569 - 0.00478 * Math.sin(rad(125.04 - 1934.136 * T));
  const meanObliquity = 23 + (26 + (21.448 - T * (46.815 + T * (0.00059 - T * 0.001813))) / 60) / 60;
  const obliquity = meanObliquity + 0.00256 * Math.cos(rad(125.04 - 1934.136 * T));
  const declination = deg(Math.asin(Math.sin(rad(obliquity)) * Math.sin(rad(apparentLongitude))));
  const y = Math.tan(rad(obliquity / 2)) ** 2;
  const equationOfTime =
    4 * deg(y * Math.sin(2 * rad(L0)) - 2 * e * Math.sin(rad(M)) + 4 * e * y * Math.sin(rad(M)) * Math.cos(2 * rad(L0)) - 0.5 * y * y * Math.sin(4 * rad(L0)) - 1.25 * e * e * Math.sin(2 * rad(M)));
  return { declination, equationOfTime };
}

type NoaaDay = { kind: 'window'; sunrise: number; sunset: number } | { kind: 'polar_day' } | { kind: 'polar_night' };

/**
 * Sunrise and sunset (UTC ms) of the solar day of the given UTC calendar date at the site: solar noon =
 * 720 − 4 × longitude − equation of time (minutes after 00:00 UTC, longitude east positive); the hour angle
 * of sunrise from the 90.833° zenith (refraction and the Sun's radius); each event recomputed at its own
 * instant until it settles, as NOAA's calculator does.
 */
function noaaTimes(dateUtc: string, latitude: number, longitude: number): NoaaDay {
  const midnight = Date.parse(`${dateUtc}T00:00:00Z`);
  const event = (sign: -1 | 1): number | 'up' | 'down' => {
    let at = midnight + (720 - 4 * longitude) * MINUTE;
    for (let i = 0; i < 5; i++) {
      const { declination, equationOfTime } = noaaSun(at);
      const cosHourAngle = Math.cos(rad(90.833)) / (Math.cos(rad(latitude)) * Math.cos(rad(declination))) - Math.tan(rad(latitude)) * Math.tan(rad(declination));
      if (cosHourAngle < -1) return 'up';
      if (cosHourAngle > 1) return 'down';
      const noon = midnight + (720 - 4 * longitude - equationOfTime) * MINUTE;
      at = noon + sign * 4 * deg(Math.acos(cosHourAngle)) * MINUTE;
    }
    return at;
  };
  const sunrise = event(-1);
  const sunset = event(1);
  if (sunrise === 'up' || sunset === 'up') return { kind: 'polar_day' };
  if (sunrise === 'down' || sunset === 'down') return { kind: 'polar_night' };
  return { kind: 'window', sunrise, sunset };
}

function reference(dateUtc: string, latitude = VALE.latitude, longitude = VALE.longitude) {
  const day = noaaTimes(dateUtc, latitude, longitude);
  if (day.kind !== 'window') throw new Error('the reference day must have a sunrise and a sunset');
  return day;
}

describe('the NOAA reference implementation itself', () => {
  test('when the summer-solstice times for the Midlands are computed, then they agree with almanac times recalled (from memory) within 10 minutes', () => {
    // From memory: around 52° N, 2° W the 21 June sunrise is about 04:45 BST (03:45 UTC) and sunset about
    // 21:33 BST (20:33 UTC). A coarse check that the equations and the coordinates are read the right way round.
    const { sunrise, sunset } = reference('2026-06-21');
    expect(Math.abs(sunrise - Date.parse('2026-06-21T03:45:00Z'))).toBeLessThan(10 * MINUTE);
    expect(Math.abs(sunset - Date.parse('2026-06-21T20:33:00Z'))).toBeLessThan(10 * MINUTE);
  });

  test('when the equinox is computed on the equator at longitude 0, then the day is about 12 h 7 min (refraction and the solar disc lengthen it; common practice)', () => {
    const { sunrise, sunset } = reference('2026-03-20', 0, 0);
    expect(Math.abs(sunset - sunrise - (12 * HOUR + 7 * MINUTE))).toBeLessThan(3 * MINUTE);
  });
});

describe('daylight window', () => {
  const days = ['2026-06-21', '2026-11-30', '2026-03-20'];

  describe.each(days)('on %s in Aldmere Vale', (date) => {
    const { sunrise, sunset } = reference(date);
    test.each([
      { label: 'NOAA sunrise + 1 h − 3 min', at: sunrise + HOUR - 3 * MINUTE, open: false },
      { label: 'NOAA sunrise + 1 h + 3 min', at: sunrise + HOUR + 3 * MINUTE, open: true },
      { label: 'midway between sunrise and sunset', at: (sunrise + sunset) / 2, open: true },
      { label: 'NOAA sunset − 1 h − 3 min', at: sunset - HOUR - 3 * MINUTE, open: true },
      { label: 'NOAA sunset − 1 h + 3 min', at: sunset - HOUR + 3 * MINUTE, open: false },
      { label: 'NOAA sunrise', at: sunrise, open: false },
      { label: 'NOAA sunset', at: sunset, open: false },
    ])('when it is $label, then the window open is $open', ({ at, open }) => {
      expect(inDaylightWindow(new Date(at), VALE.latitude, VALE.longitude)).toBe(open);
    });

    test('when the window is asked for at noon, then sunrise and sunset are within 2 minutes of NOAA\'s and the window runs from sunrise + 1 h to sunset − 1 h', () => {
      const window = daylightWindowAt(new Date(`${date}T12:00:00Z`), VALE.latitude, VALE.longitude);
      expect(window.kind).toBe('window');
      if (window.kind !== 'window') return;
      expect(Math.abs(window.sunrise.getTime() - sunrise)).toBeLessThan(2 * MINUTE);
      expect(Math.abs(window.sunset.getTime() - sunset)).toBeLessThan(2 * MINUTE);
      expect(window.opens.getTime() - window.sunrise.getTime()).toBe(HOUR);
      expect(window.sunset.getTime() - window.closes.getTime()).toBe(HOUR);
    });
  });

  test('when it is night before dawn (00:30 UTC), then the window is closed and the day found is that same day', () => {
    const now = new Date('2026-06-21T00:30:00Z');
    const window = daylightWindowAt(now, VALE.latitude, VALE.longitude);
    expect(window.kind).toBe('window');
    if (window.kind !== 'window') return;
    expect(Math.abs(window.sunrise.getTime() - reference('2026-06-21').sunrise)).toBeLessThan(2 * MINUTE);
    expect(inDaylightWindow(now, VALE.latitude, VALE.longitude)).toBe(false);
  });

  test('when the site is far east and it is late evening UTC, then the window is that of the site\'s own morning', () => {
    // 45° S, 170° E: 23:00 UTC on 20 June is about 10:20 local solar time on 21 June (winter there), so
    // NOAA's solar day is that of the 21st, whose sunrise falls on the 20th in UTC.
    const site = { latitude: -45, longitude: 170 };
    const now = new Date('2026-06-20T23:00:00Z');
    const { sunrise, sunset } = reference('2026-06-21', site.latitude, site.longitude);
    expect(sunrise + HOUR + 3 * MINUTE).toBeLessThan(now.getTime());
    expect(sunset - HOUR - 3 * MINUTE).toBeGreaterThan(now.getTime());
    expect(inDaylightWindow(now, site.latitude, site.longitude)).toBe(true);
    const window = daylightWindowAt(now, site.latitude, site.longitude);
    expect(window.kind === 'window' && Math.abs(window.sunrise.getTime() - sunrise)).toBeLessThan(2 * MINUTE);
  });

  test('when the site is in polar day (78.2° N at midsummer midnight), then the window is open', () => {
    const now = new Date('2026-06-21T00:00:00Z');
    expect(noaaTimes('2026-06-21', 78.22, 15.65).kind).toBe('polar_day');
    expect(daylightWindowAt(now, 78.22, 15.65)).toEqual({ kind: 'polar_day' });
    expect(inDaylightWindow(now, 78.22, 15.65)).toBe(true);
  });

  test('when the site is in polar night (78.2° N at midwinter noon), then the window is closed', () => {
    const now = new Date('2026-12-21T12:00:00Z');
    expect(noaaTimes('2026-12-21', 78.22, 15.65).kind).toBe('polar_night');
    expect(daylightWindowAt(now, 78.22, 15.65)).toEqual({ kind: 'polar_night' });
    expect(inDaylightWindow(now, 78.22, 15.65)).toBe(false);
  });
});
