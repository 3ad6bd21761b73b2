// Strict Semantic Versioning 2.0.0 (semver.org). The `semver` package's parser is loose on purpose
// (it accepts "v2.4.0" and " 2.4.0"), so release versions are checked against the spec's own grammar.
import { z } from 'zod';

/** The grammar from the semver.org 2.0.0 FAQ ("Is there a suggested regular expression…?", ECMAScript form). */
export const semverPattern =
  /^(0|[1-9]\d*)\.(0|[1-9]\d*)\.(0|[1-9]\d*)(?:-((?:0|[1-9]\d*|\d*[a-zA-Z-][0-9a-zA-Z-]*)(?:\.(?:0|[1-9]\d*|\d*[a-zA-Z-][0-9a-zA-Z-]*))*))?(?:\+([0-9a-zA-Z-]+(?:\.[0-9a-zA-Z-]+)*))?$/;

/**
 * Heliodor's bounds on a version the grammar admits: at most 256 characters, and every number (major,
 * minor, patch, numeric pre-release identifiers) at most 2^53 − 1 — the largest integer a JSON number
 * carries exactly between implementations (I-JSON, RFC 7493 §2.2), so every part of Heliodor (the
 * server, the console, the CLI, a logger's JSON parser) orders versions alike.
 */
export const semverMaxLength = 256;

const numberNames = ['major', 'minor', 'patch'] as const;

function boundsProblem(text: string): string | undefined {
  if (text.length > semverMaxLength) return `is ${text.length} characters long: a version has at most ${semverMaxLength}`;
  const m = semverPattern.exec(text)!;
  const tooLarge = (digits: string) => digits.length > 16 || Number(digits) > Number.MAX_SAFE_INTEGER;
  const big = [m[1], m[2], m[3]].findIndex(tooLarge);
  if (big !== -1) return `'${text}' has a ${numberNames[big]} number above ${Number.MAX_SAFE_INTEGER} (2^53 − 1), the largest Heliodor compares`;
  const pre = m[4]?.split('.').find((id) => /^\d+$/.test(id) && tooLarge(id));
  if (pre !== undefined) return `'${text}' has the numeric pre-release identifier ${pre}, above ${Number.MAX_SAFE_INTEGER} (2^53 − 1), the largest Heliodor compares`;
  return undefined;
}

/** Whether the text is a semantic version (semver.org 2.0.0 grammar) within Heliodor's bounds. */
export function isStrictSemver(text: string): boolean {
  return semverPattern.test(text) && boundsProblem(text) === undefined;
}

const identifierChars = /^[0-9A-Za-z-]+$/;
const partNames = ['major', 'minor', 'patch'] as const;

/** What a release engineer should fix, or undefined when the text is a semantic version. */
export function semverProblem(text: string): string | undefined {
  if (semverPattern.test(text)) return boundsProblem(text);
  const shown = `'${text}'`;
  const hint = (fixed: string) => (isStrictSemver(fixed) ? `${fixed} is a semantic version; ` : '');

  if (text.trim() === '') return 'is empty: write a semantic version such as 2.4.0';
  if (/\s/.test(text)) return `${hint(text.replace(/\s+/g, ''))}${shown} has spaces`;
  if (/^[vV]/.test(text)) return `${hint(text.slice(1))}${shown} has a leading v`;

  const plus = text.indexOf('+');
  const head = plus === -1 ? text : text.slice(0, plus);
  const build = plus === -1 ? undefined : text.slice(plus + 1);
  const dash = head.indexOf('-');
  const core = dash === -1 ? head : head.slice(0, dash);
  const pre = dash === -1 ? undefined : head.slice(dash + 1);

  const parts = core.split('.');
  if (parts.some((p) => !/^\d+$/.test(p))) {
    return `${shown} must start with three numbers, major.minor.patch (for example 2.4.0)`;
  }
  if (parts.length < 3) {
    const padded = [...parts, '0', '0'].slice(0, 3).join('.') + text.slice(core.length);
    return `${hint(padded)}${shown} has ${parts.length === 1 ? 'one number' : 'two numbers'}: major.minor.patch needs three`;
  }
  if (parts.length > 3) return `${shown} has ${parts.length} numbers: a semantic version has exactly three, major.minor.patch`;
  const leadingZero = parts.findIndex((p) => p.length > 1 && p.startsWith('0'));
  if (leadingZero !== -1) {
    const fixed = parts.map((p) => String(Number(p))).join('.') + text.slice(core.length);
    return `${hint(fixed)}${shown} has a leading zero in the ${partNames[leadingZero]} number`;
  }
  if (pre !== undefined) {
    const ids = pre.split('.');
    if (ids.some((id) => id === '')) return `${shown} has an empty pre-release identifier (after '-' or between dots)`;
    const bad = ids.find((id) => !identifierChars.test(id));
    if (bad !== undefined) return `${shown} has '${bad}' in its pre-release: only letters, digits and '-' are allowed`;
    const zero = ids.find((id) => /^\d+$/.test(id) && id.length > 1 && id.startsWith('0'));
    if (zero !== undefined) return `${shown} has a leading zero in the numeric pre-release identifier '${zero}'`;
  }
  if (build !== undefined) {
    const ids = build.split('.');
    if (ids.some((id) => id === '')) return `${shown} has an empty build metadata identifier (after '+' or between dots)`;
    const bad = ids.find((id) => !identifierChars.test(id));
    if (bad !== undefined) return `${shown} has '${bad}' in its build metadata: only letters, digits and '-' are allowed`;
  }
  return `${shown} is not a semantic version (semver.org 2.0.0), for example 2.4.0 or 2.5.0-rc.1`;
}

/** A version string that follows the semver.org 2.0.0 grammar exactly; build metadata is allowed. */
export const strictSemver = z.string().superRefine((text, ctx) => {
  const problem = semverProblem(text);
  if (problem) ctx.addIssue({ code: 'custom', message: problem });
});
