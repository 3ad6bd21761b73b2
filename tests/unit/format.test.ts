// Durations on the release dashboard (time to install). Units per ISO 80000-3 / the SI brochure's
// non-SI units accepted for use with the SI: 1 min = 60 s, 1 h = 3 600 s, 1 d = 86 400 s.
import { duration, summaryAge } from '../../components/format';

const nb = '\u00a0';
const plain = (s: string) => s.replaceAll(nb, ' ');

describe('duration', () => {
  test.each([
    [0, '0 s'],
    [59.4, '59 s'],
    [60, '1 min'],
    [1500, '25 min'], // the dashboard test's worked median
    [3569, '59 min'],
    [3599, '1 h'], // 59.98 min rounds to a whole hour, never "0 h 60 min"
    [3600, '1 h'],
    [5580, '1 h 33 min'], // the worked 90th percentile
    [86_399, '1 d'],
    [86_400 + 4 * 3600, '1 d 4 h'],
    [-5, '0 s'],
  ])('when %d s, then "%s"', (seconds, words) => {
    expect(plain(duration(seconds))).toBe(words);
  });

  test('when shown, then a figure and its unit never break across lines (no-break space)', () => {
    expect(duration(5580)).toBe(`1${nb}h 33${nb}min`);
  });
});

// The age of a summary answer ("as of 12 s ago"), in the same SI units (1 min = 60 s, 1 h = 3 600 s).
describe('summaryAge', () => {
  test.each([
    [null, null],
    [0, null],
    [9, null], // fresh: the console says nothing
    [12, 'as of 12 s ago'],
    [59, 'as of 59 s ago'],
    [90, 'as of 2 min ago'],
    [7200, 'as of 2 h ago'],
  ])('when the summary is %p s behind the answer, then the console says %p', (ageS, expected) => {
    expect(summaryAge(ageS)).toBe(expected);
  });
});
