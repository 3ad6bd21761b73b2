import fc from 'fast-check';
import { isStrictSemver, semverMaxLength, semverProblem, strictSemver } from '../../schemas/semver';

// Heliodor's version grammar (schemas/semver.ts) checked against semver.org 2.0.0 itself: the examples the
// specification publishes, and its "Backus–Naur Form Grammar for Valid SemVer Versions" written out below as
// a parser of its own (one function per BNF rule), independent of the regular expression under test.

/** The semver.org 2.0.0 BNF, rule by rule: <valid semver> ::= <version core> ["-" <pre-release>] ["+" <build>]. */
function bnfValid(text: string): boolean {
  let at = 0;
  const peek = () => text[at];
  const isDigit = (c: string | undefined) => c !== undefined && c >= '0' && c <= '9';
  const isLetter = (c: string | undefined) => c !== undefined && ((c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z'));
  const isIdentifierCharacter = (c: string | undefined) => isDigit(c) || isLetter(c) || c === '-';
  // <numeric identifier> ::= "0" | <positive digit> | <positive digit> <digits>
  const numericIdentifier = (): boolean => {
    if (peek() === '0') {
      at += 1;
      return !isDigit(peek());
    }
    if (!isDigit(peek())) return false;
    while (isDigit(peek())) at += 1;
    return true;
  };
  // <identifier characters>, then: <alphanumeric identifier> has a <non-digit>; a digits-only one is numeric.
  const identifier = (kind: 'pre-release' | 'build'): boolean => {
    const start = at;
    while (isIdentifierCharacter(peek())) at += 1;
    const id = text.slice(start, at);
    if (id === '') return false;
    const hasNonDigit = [...id].some((c) => !isDigit(c));
    if (hasNonDigit) return true; // <alphanumeric identifier>
    // <pre-release identifier> ::= <alphanumeric identifier> | <numeric identifier>; <build identifier> also allows <digits>.
    return kind === 'build' || id === '0' || id[0] !== '0';
  };
  const dotSeparated = (kind: 'pre-release' | 'build'): boolean => {
    if (!identifier(kind)) return false;
    while (peek() === '.') {
      at += 1;
      if (!identifier(kind)) return false;
    }
    return true;
  };
  // <version core> ::= <major> "." <minor> "." <patch>
  if (!numericIdentifier() || peek() !== '.') return false;
  at += 1;
  if (!numericIdentifier() || peek() !== '.') return false;
  at += 1;
  if (!numericIdentifier()) return false;
  if (peek() === '-') {
    at += 1;
    if (!dotSeparated('pre-release')) return false;
  }
  if (peek() === '+') {
    at += 1;
    if (!dotSeparated('build')) return false;
  }
  return at === text.length;
}

// Published examples of semver.org 2.0.0: item 2 ("1.9.0 -> 1.10.0 -> 1.11.0"), item 4 (0.y.z), item 9
// (pre-release), item 10 (build metadata) and the item 11 precedence chain.
const published = [
  '1.9.0', '1.10.0', '1.11.0', '1.1.3', '2.0.0', '2.1.7', '2.2.0', '0.1.0',
  '1.0.0-alpha', '1.0.0-alpha.1', '1.0.0-0.3.7', '1.0.0-x.7.z.92', '1.0.0-x-y-z.--',
  '1.0.0-alpha+001', '1.0.0+20130313144700', '1.0.0-beta+exp.sha.5114f85', '1.0.0+21AF26D3----117B344092BD',
  '1.0.0-alpha.beta', '1.0.0-beta', '1.0.0-beta.2', '1.0.0-beta.11', '1.0.0-rc.1', '1.0.0',
];

const messageOf = (text: string) => {
  const result = strictSemver.safeParse(text);
  return result.success ? undefined : result.error.issues[0].message;
};

describe('semantic versions (semver.org 2.0.0)', () => {
  test.each(published)('when %s, an example semver.org publishes, is checked, then the grammar accepts it as the BNF does', (version) => {
    expect(bnfValid(version)).toBe(true);
    expect(isStrictSemver(version)).toBe(true);
    expect(strictSemver.parse(version)).toBe(version);
    expect(semverProblem(version)).toBeUndefined();
  });

  test.each(['1.0.0-0', '1.0.0-0a', '1.0.0+001', '1.0.0+0.01', '1.0.0-a.0'])(
    'when %s is checked, then it is accepted: a lone 0, letters after digits, and leading zeros in build metadata are allowed by the BNF',
    (version) => {
      expect(bnfValid(version)).toBe(true);
      expect(isStrictSemver(version)).toBe(true);
    },
  );

  test('when any short text over the grammar\'s characters is checked, then Heliodor\'s grammar and the semver.org BNF agree', () => {
    // Texts of up to 20 characters keep every number below 16 digits, under Heliodor's own bound (checked below).
    const character = fc.constantFrom('0', '1', '7', '9', 'a', 'Z', 'x', '-', '.', '+', ' ', '_', 'v');
    fc.assert(
      fc.property(fc.array(character, { maxLength: 20 }).map((cs) => cs.join('')), (text) => {
        expect(isStrictSemver(text)).toBe(bnfValid(text));
      }),
      { numRuns: 20000 },
    );
    // Texts built from the BNF's own parts, so that valid versions are common too.
    const numeric = fc.oneof(fc.constant('0'), fc.integer({ min: 1, max: 99999 }).map(String), fc.constant('01'));
    const ident = fc.oneof(numeric, fc.constantFrom('alpha', 'rc', 'x-y', '-', '0a', 'a0', '', '00', 'b_1'));
    const dotted = fc.array(ident, { minLength: 1, maxLength: 3 }).map((ids) => ids.join('.'));
    const version = fc.tuple(numeric, numeric, numeric, fc.option(dotted), fc.option(dotted)).map(
      ([a, b, c, pre, build]) => `${a}.${b}.${c}${pre === null ? '' : `-${pre}`}${build === null ? '' : `+${build}`}`,
    );
    fc.assert(
      fc.property(version, (text) => {
        expect(isStrictSemver(text)).toBe(bnfValid(text));
      }),
      { numRuns: 20000 },
    );
  });

  test('when a number is above 2^53 − 1 or the text is longer than 256 characters, then Heliodor refuses what the BNF allows (its own bound, I-JSON RFC 7493 §2.2)', () => {
    for (const version of ['9007199254740992.0.0', '1.9007199254740992.0', '1.0.9007199254740992', '1.0.0-rc.9007199254740992', `1.0.0+${'a'.repeat(semverMaxLength)}`]) {
      expect(bnfValid(version)).toBe(true);
      expect(isStrictSemver(version)).toBe(false);
      expect(messageOf(version)).toMatch(/2\^53 − 1|at most 256/);
    }
    expect(isStrictSemver('9007199254740991.0.0')).toBe(true);
    expect(isStrictSemver('1.0.0-rc.9007199254740991')).toBe(true);
    // Build metadata is not a number (item 10): long digit runs there are only text.
    expect(isStrictSemver('1.0.0+99999999999999999999')).toBe(true);
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
  test.each(refused)("when '%s' is checked, then it is refused, as by the BNF, with a reason a release engineer can act on", (version, message) => {
    expect(bnfValid(version)).toBe(false);
    expect(isStrictSemver(version)).toBe(false);
    expect(messageOf(version)).toMatch(message);
  });
});
