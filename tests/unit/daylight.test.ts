import { getTimes } from 'suncalc';
import { daylightWindowAt, inDaylightWindow } from '../../server/rollout/daylight';

// Reference: the suncalc package (a maintained solar-position library) computes sunrise and sunset in
// each test; the window rule itself — sunrise + 1 h … sunset − 1 h — is DEVICE_API.md "Who gets an offer", rule 5.
// Site: the demo area of Aldmere Vale (PRODUCT.md), about 52.14° N, 1.98° W.
const VALE = { latitude: 52.14, longitude: -1.98 };
const MINUTE = 60_000;
const HOUR = 60 * MINUTE;

function referenceTimes(day: string, latitude = VALE.latitude, longitude = VALE.longitude) {
  const t = getTimes(new Date(day), latitude, longitude);
  if (!t.sunrise || !t.sunset) throw new Error('the reference day must have a sunrise and a sunset');
  return { sunrise: t.sunrise.getTime(), sunset: t.sunset.getTime() };
}

describe('daylight window', () => {
  const days = ['2026-06-21T12:00:00Z', '2026-11-30T12:00:00Z', '2026-03-20T12:00:00Z'];

  describe.each(days)('on the day of %s in Aldmere Vale', (day) => {
    const { sunrise, sunset } = referenceTimes(day);
    test.each([
      { label: 'sunrise + 1 h − 1 min', at: sunrise + HOUR - MINUTE, open: false },
      { label: 'sunrise + 1 h + 1 min', at: sunrise + HOUR + MINUTE, open: true },
      { label: 'solar noon', at: (sunrise + sunset) / 2, open: true },
      { label: 'sunset − 1 h − 1 min', at: sunset - HOUR - MINUTE, open: true },
      { label: 'sunset − 1 h + 1 min', at: sunset - HOUR + MINUTE, open: false },
      { label: 'sunrise', at: sunrise, open: false },
      { label: 'sunset', at: sunset, open: false },
    ])('when it is $label, then the window open is $open', ({ at, open }) => {
      expect(inDaylightWindow(new Date(at), VALE.latitude, VALE.longitude)).toBe(open);
    });

    test('when the window is asked for, then it runs from the reference sunrise + 1 h to sunset − 1 h', () => {
      const window = daylightWindowAt(new Date(day), VALE.latitude, VALE.longitude);
      expect(window.kind).toBe('window');
      if (window.kind !== 'window') return;
      expect(window.opens.getTime()).toBe(sunrise + HOUR);
      expect(window.closes.getTime()).toBe(sunset - HOUR);
    });
  });

  test('when it is night before dawn (00:30 UTC), then the window is closed and the day found is that same day', () => {
    const now = new Date('2026-06-21T00:30:00Z');
    const window = daylightWindowAt(now, VALE.latitude, VALE.longitude);
    expect(window.kind).toBe('window');
    if (window.kind !== 'window') return;
    expect(window.sunrise.toISOString().slice(0, 10)).toBe('2026-06-21');
    expect(inDaylightWindow(now, VALE.latitude, VALE.longitude)).toBe(false);
  });

  test('when the summer-solstice times are compared with almanac times recalled for the Midlands (from memory), then they agree within 10 minutes', () => {
    // From memory: around 52° N, 2° W the 21 June sunrise is about 04:45 BST (03:45 UTC) and sunset about
    // 21:33 BST (20:33 UTC). A coarse cross-check that the site's coordinates are read the right way round.
    const { sunrise, sunset } = referenceTimes('2026-06-21T12:00:00Z');
    expect(Math.abs(sunrise - Date.parse('2026-06-21T03:45:00Z'))).toBeLessThan(10 * MINUTE);
    expect(Math.abs(sunset - Date.parse('2026-06-21T20:33:00Z'))).toBeLessThan(10 * MINUTE);
    const window = daylightWindowAt(new Date('2026-06-21T12:00:00Z'), VALE.latitude, VALE.longitude);
    expect(window.kind === 'window' && window.sunrise.getTime()).toBe(sunrise);
  });

  test('when the site is far east and it is late evening UTC, then the window is that of the site\'s own morning', () => {
    // 45° S, 170° E: 23:00 UTC on 20 June is about 10:20 local solar time on 21 June (winter there).
    const site = { latitude: -45, longitude: 170 };
    const now = new Date('2026-06-20T23:00:00Z');
    const { sunrise, sunset } = referenceTimes('2026-06-20T23:00:00Z', site.latitude, site.longitude);
    expect(sunrise).toBeLessThan(now.getTime());
    expect(sunset).toBeGreaterThan(now.getTime());
    expect(inDaylightWindow(now, site.latitude, site.longitude)).toBe(now.getTime() >= sunrise + HOUR && now.getTime() <= sunset - HOUR);
    expect(inDaylightWindow(now, site.latitude, site.longitude)).toBe(true);
  });

  test('when the site is in polar day (78.2° N at midsummer midnight), then the window is open', () => {
    const now = new Date('2026-06-21T00:00:00Z');
    expect(getTimes(now, 78.22, 15.65).alwaysUp).toBe(true);
    expect(daylightWindowAt(now, 78.22, 15.65)).toEqual({ kind: 'polar_day' });
    expect(inDaylightWindow(now, 78.22, 15.65)).toBe(true);
  });

  test('when the site is in polar night (78.2° N at midwinter noon), then the window is closed', () => {
    const now = new Date('2026-12-21T12:00:00Z');
    expect(getTimes(now, 78.22, 15.65).alwaysDown).toBe(true);
    expect(daylightWindowAt(now, 78.22, 15.65)).toEqual({ kind: 'polar_night' });
    expect(inDaylightWindow(now, 78.22, 15.65)).toBe(false);
  });
});
