// The signed manifest (DEVICE_API.md, "The signed manifest"): what a release engineer signs offline
// and what a logger checks before it installs an image. Field names are the wire names.
import { z } from 'zod';
import { uuid } from './common';
import { strictSemver } from './semver';

export const signatureAlgorithms = ['ed25519', 'ecdsa-p256-sha256'] as const;
export const signatureAlgorithmSchema = z.enum(signatureAlgorithms);
export type SignatureAlgorithm = z.infer<typeof signatureAlgorithmSchema>;

/** Zod error option: "is missing" when absent, else the given explanation. */
const say = (message: string) => ({ error: (issue: { input?: unknown }) => (issue.input === undefined ? 'is missing' : message) });

/** A board revision label as printed on the board, e.g. "B". */
export const boardLabel = z
  .string(say('must be a board revision label such as "B"'))
  .regex(/^[A-Za-z0-9][A-Za-z0-9._-]{0,31}$/, "must be a board revision label: 1–32 letters, digits, '.', '_' or '-', e.g. \"B\"");

/**
 * The largest security counter a manifest (or a check-in) may carry: 2^53 − 1, the largest integer a JSON
 * number carries exactly (I-JSON, RFC 7493 §2.2); the database keeps it as a bigint.
 */
export const securityCounterMax = Number.MAX_SAFE_INTEGER;

export const manifestSchema = z.strictObject(
  {
    board_revisions: z
      .array(boardLabel, say('must be a list of board revision labels, e.g. ["B","C"]'))
      .min(1, 'must name at least one board revision')
      .refine((labels) => new Set(labels).size === labels.length, 'must not name a board revision twice'),
    /** Optional: after this time the manifest is not used (no offer carries it, loggers refuse it). */
    expires: z.iso.datetime(say('must be an RFC 3339 UTC time such as 2027-05-31T00:00:00Z')).optional(),
    format: z.literal(1, say('must be 1 (the only manifest format)')),
    image_sha256: z
      .string(say('must be the image SHA-256 as 64 lowercase hex characters'))
      .regex(/^[0-9a-f]{64}$/, 'must be the image SHA-256 as 64 lowercase hex characters'),
    image_size: z
      .number(say('must be the image size in bytes'))
      .int('must be a whole number of bytes')
      .positive('must be at least 1 byte')
      .max(Number.MAX_SAFE_INTEGER, 'is too large'),
    issued_at: z.iso.datetime(say('must be an RFC 3339 UTC time such as 2026-11-30T10:00:00Z')),
    model: z.string(say('must be the model id, a lowercase UUID')).pipe(uuid),
    security_counter: z
      .number(say('must be the security counter, a whole number of 0 or more'))
      .int('must be a whole number')
      .nonnegative('must be 0 or more')
      // A time-based sequence number (RFC 9124, docs/SOURCES.md §5) may pass 2^31 − 1: the releases
      // table keeps a bigint, and JSON carries integers exactly up to 2^53 − 1.
      .max(securityCounterMax, `is larger than ${securityCounterMax} (2^53 − 1), the largest security counter Heliodor keeps`),
    version: z.string(say('must be a semantic version such as 2.4.0')).pipe(strictSemver),
  },
  {
    error: (issue) =>
      issue.code === 'unrecognized_keys'
        ? `has ${issue.keys.length === 1 ? 'a field' : 'fields'} that manifest format 1 does not define: ${issue.keys.join(', ')}`
        : issue.input === undefined
          ? 'is missing: expected the manifest object'
          : 'must be a JSON object with the manifest fields',
  },
);
export type Manifest = z.infer<typeof manifestSchema>;
