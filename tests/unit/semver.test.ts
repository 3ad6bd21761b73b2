import semver from 'semver';
import { isStrictSemver, semverProblem, strictSemver } from '../../schemas/semver';

// Source: semver.org spec v2.0.0 item 11 (precedence example chain), docs/SOURCES.md §4 [S, V].
const chain = ['1.0.0-alpha', '1.0.0-alpha.1', '1.0.0-alpha.beta', '1.0.0-beta', '1.0.0-beta.2', '1.0.0-beta.11', '1.0.0-rc.1', '1.0.0'];

const messageOf = (text: string) => {
  const result = strictSemver.safeParse(text);
  return result.success ? undefined : result.error.issues[0].message;
};

describe('semantic versions (semver.org 2.0.0)', () => {
  test('when the §11 chain is compared with the semver package, then each version ranks below the next', () => {
    // Reference library: semver (npm), compare() returns -1 when the first ranks lower.
    for (let i = 0; i + 1 < chain.length; i += 1) {
      expect(semver.compare(chain[i], chain[i + 1])).toBe(-1);
      expect(semver.compare(chain[i + 1], chain[i])).toBe(1);
    }
    const shuffled = [chain[3], chain[7], chain[0], chain[5], chain[2], chain[6], chain[1], chain[4]];
    expect([...shuffled].sort(semver.compare)).toEqual(chain);
  });

  test.each(chain)('when %s from the §11 chain is checked, then the strict grammar accepts it', (version) => {
    expect(strictSemver.parse(version)).toBe(version);
    expect(semverProblem(version)).toBeUndefined();
  });

  test.each(['1.0.0-alpha.1', '1.0.0+build.5', '1.0.0-0.3.7', '1.0.0-x.7.z.92'])(
    'when %s is checked, then it is a semantic version (semver.org items 9–10: pre-release and build metadata)',
    (version) => {
      expect(isStrictSemver(version)).toBe(true);
      expect(strictSemver.safeParse(version).success).toBe(true);
    },
  );

  test.each(['1.0.0-0', '1.0.0-0a', '1.0.0+001', '1.0.0-x-y-z.--'])(
    'when %s is checked, then the grammar accepts it (docs/SOURCES.md §4, semver.org FAQ regex)',
    (version) => {
      expect(isStrictSemver(version)).toBe(true);
    },
  );

  test('when build metadata differs, then precedence ignores it (semver.org item 10: MUST be ignored)', () => {
    expect(isStrictSemver('1.0.0+build.5')).toBe(true);
    expect(semver.compare('1.0.0+build.5', '1.0.0+build.6')).toBe(0);
  });

  // Source: semver.org item 2 (no leading zeroes), item 9 (pre-release identifiers), FAQ ("v1.2.3" is not a
  // semantic version); docs/SOURCES.md §4 "Rejected by the grammar".
  const refused: [string, RegExp][] = [
    ['v2.4.0', /^2\.4\.0 is a semantic version; 'v2\.4\.0' has a leading v$/],
    [' 2.4.0', /^2\.4\.0 is a semantic version; ' 2\.4\.0' has spaces$/],
    ['2.4.0 ', /has spaces/],
    ['01.2.3', /^1\.2\.3 is a semantic version; '01\.2\.3' has a leading zero in the major number$/],
    ['1.02.3', /leading zero in the minor number/],
    ['1.2.03', /leading zero in the patch number/],
    ['1.2.3-01', /leading zero in the numeric pre-release identifier '01'/],
    ['1.0.0-alpha.01', /leading zero in the numeric pre-release identifier '01'/],
    ['1.2', /^1\.2\.0 is a semantic version; '1\.2' has two numbers/],
    ['1.2.3.4', /has 4 numbers: a semantic version has exactly three/],
    ['-1.0.0', /three numbers/],
    ['1.0.0-', /empty pre-release identifier/],
    ['1.0.0+', /empty build metadata identifier/],
    ['1.0.0-alpha..1', /empty pre-release identifier/],
    ['1.0.0-alpha_beta', /'alpha_beta' in its pre-release/],
    ['1.0.0-a+b+c', /'b\+c' in its build metadata/],
    ['', /is empty/],
  ];
  test.each(refused)("when '%s' is checked, then it is refused with a reason a release engineer can act on", (version, message) => {
    expect(isStrictSemver(version)).toBe(false);
    expect(messageOf(version)).toMatch(message);
  });
});
