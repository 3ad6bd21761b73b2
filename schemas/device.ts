// The device API, version 1 (DEVICE_API.md): the check-in request and response, the install report,
// the offer and the measurement profile as firmware sees them. Wire names are snake_case. These
// schemas validate requests and generate the OpenAPI document (server/device-api/openapi.ts), so the
// two cannot drift apart. Objects are not strict: unknown fields are ignored (forward compatible).
import { z } from 'zod';
import { uuid } from './common';
import { strictSemver } from './semver';
import { signatureAlgorithmSchema } from './manifest';
import { FAILURE_REASONS, REPORTED_INSTALL_STATES, RESET_REASONS, type ResetReason } from './words';

export type { FailureReason, ReportedInstallState, ResetReason } from './words';

/** The largest value a PostgreSQL integer column holds (2^31 − 1). */
export const INT4_MAX = 2 ** 31 - 1;

/**
 * A whole number of 0 or more, at most `max`: what the column that keeps it holds — 2^53 − 1 (the largest
 * integer a JSON number carries exactly, I-JSON RFC 7493 §2.2) for bigint columns, 2^31 − 1 for integer
 * ones — so an out-of-range value is a 400 naming the field, never a database error.
 */
const count = (what: string, max: number = Number.MAX_SAFE_INTEGER) =>
  z
    .number({ message: `must be ${what}, a whole number of 0 or more` })
    .int('must be a whole number')
    .min(0, 'must be 0 or more')
    .max(max, `must be at most ${max}`);

const reading = (description: string) => z.number({ message: 'must be a number' }).finite().optional().meta({ description });

export const readingsSchema = z
  .object({
    bus_v: reading('Bus (panel) voltage, V.'),
    current_a: reading('Current through the shunt, A.'),
    power_w: reading('Power, W.'),
    energy_wh: reading('Energy since boot, Wh (cumulative).'),
    temp_c: reading('Temperature at the probe, °C.'),
  })
  .meta({ id: 'Readings', description: 'Latest measurements. Unknown fields are ignored.' });
export type Readings = z.infer<typeof readingsSchema>;

export const resetCountsSchema = z
  .object(Object.fromEntries(RESET_REASONS.map((r) => [r, count('a count of boots', INT4_MAX).optional()])) as Record<ResetReason, z.ZodOptional<ReturnType<typeof count>>>)
  .meta({
    id: 'ResetCounts',
    description: 'Boots since the previous check-in by reason, e.g. {"watchdog": 2, "brownout": 1}. Unknown reasons are ignored.',
  });
export type ResetCounts = z.infer<typeof resetCountsSchema>;

export const installReportSchema = z
  .object({
    release: uuid.meta({ description: 'The release id from the offer.' }),
    state: z.enum(REPORTED_INSTALL_STATES, { message: `must be one of ${REPORTED_INSTALL_STATES.join(', ')}` }),
    reason: z
      .enum(FAILURE_REASONS, { message: `must be one of ${FAILURE_REASONS.join(', ')}` })
      .optional()
      .meta({ description: 'With state failed. A failed report without a reason counts as other. Ignored with other states.' }),
    detail: z.string({ message: 'must be text' }).max(200, 'at most 200 characters').optional(),
  })
  .meta({
    id: 'InstallReport',
    description:
      'States only move forward per release (downloading < downloaded < installing < installed; failed ends the attempt). ' +
      'A repeated or older state is accepted and ignored, so a retried check-in never double-counts. ' +
      'Report installed when the new image has been written and the logger is about to boot it, or on the first check-in after it booted. ' +
      'A later check-in that still runs an older version counts as a rollback by the bootloader (failed, other).',
  });
export type InstallReport = z.infer<typeof installReportSchema>;

export const checkInRequestSchema = z
  .object({
    firmware: z.string({ message: 'must be the running version, e.g. "2.4.0"' }).pipe(strictSemver).meta({
      description: 'Version now running; strict semver.org 2.0.0 grammar (no leading v, no leading zeros, no spaces).',
      example: '2.3.1',
    }),
    board: z.string({ message: 'must be the board revision label, e.g. "B"' }).trim().min(1, 'is required').max(32, 'at most 32 characters').meta({ example: 'B' }),
    security_counter: count('the highest manifest security counter accepted').meta({
      description: 'Highest manifest counter this logger has accepted, at most 2^53 − 1 (it may be time-based); the decision uses the value sent in this check-in.',
    }),
    uptime_s: count('seconds since boot').optional(),
    reset_reason: z.enum(RESET_REASONS, { message: `must be one of ${RESET_REASONS.join(', ')}` }).optional().meta({ description: 'Cause of the last boot.' }),
    resets_since_last: count('a count of boots', INT4_MAX).optional().meta({
      description: 'Boots since the previous check-in; counted under reset_reason when reset_counts is absent.',
    }),
    reset_counts: resetCountsSchema.optional(),
    rssi_dbm: z.number({ message: 'must be a whole number of dBm' }).int('must be a whole number').min(-120, 'must be −120 or more').max(0, 'must be 0 or less').optional(),
    free_heap_b: count('free heap in bytes').optional(),
    supply_v: z.number({ message: 'must be a number of volts' }).min(0, 'must be 0 V or more').max(60, 'must be 60 V or less').optional().meta({
      description: 'Supply voltage at the board input, V. Checked against the model minimum before an offer (supply guard).',
    }),
    readings: readingsSchema.optional(),
    config_version: count('the measurement profile version', INT4_MAX).optional().meta({
      description: 'Measurement profile version the logger runs; when absent or behind, the response carries the profile.',
    }),
    report: installReportSchema.optional(),
    trust_version: z
      .number({ message: 'must be the version of the trust set the logger holds, a whole number of 1 or more' })
      .int('must be a whole number')
      .min(1, 'must be 1 or more')
      .max(INT4_MAX, `must be at most ${INT4_MAX}`)
      .optional()
      .meta({ description: 'Version of the trust set the logger holds; when a later one is signed, the answer carries the next version (trust_set).' }),
  })
  .meta({ id: 'CheckInRequest', description: 'Unknown fields are ignored (forward compatible).' });
export type CheckInRequest = z.infer<typeof checkInRequestSchema>;

export const deviceConfigSchema = z
  .object({
    version: z.number().int().min(1),
    shunt_ohm: z.number().meta({ description: 'Shunt resistance, Ω.' }),
    max_current_a: z.number().meta({ description: 'Largest expected current, A.' }),
    current_lsb_a: z.number().meta({ description: 'Current register LSB, A per bit.' }),
    calibration: z.number().int().meta({ description: 'Calibration register value.' }),
    power_lsb_w: z.number().meta({ description: 'Power register LSB, W per bit.' }),
    bus_v_max: z.number().meta({ description: 'Bus voltage range, V.' }),
    temp_resolution_bits: z.number().int().meta({ description: 'Temperature probe resolution, 9–12 bits.' }),
    sample_interval_s: z.number().int().meta({ description: 'Seconds between samples.' }),
  })
  .meta({ id: 'MeasurementProfile', description: 'The measurement profile to run, sent when config_version is absent or behind.' });
export type DeviceConfig = z.infer<typeof deviceConfigSchema>;

export const offerSchema = z
  .object({
    release: uuid,
    version: z.string().meta({ example: '2.4.0' }),
    security_counter: z.number().int().min(0).max(Number.MAX_SAFE_INTEGER),
    manifest: z.string().meta({ description: 'Base64 of the exact signed manifest bytes (RFC 8785 canonical JSON).' }),
    signature: z.string().meta({ description: 'Base64 of the signature over the manifest bytes (Ed25519, or ECDSA P-256 raw r‖s, 64 bytes).' }),
    key_id: z.string().meta({ description: 'First 16 hex characters of the SHA-256 of the public key (DER SubjectPublicKeyInfo).' }),
    algorithm: signatureAlgorithmSchema,
    signatures: z
      .array(
        z
          .object({
            key_id: z.string().meta({ description: 'The signing key id (as key_id above).' }),
            algorithm: signatureAlgorithmSchema,
            signature: z.string().meta({ description: 'Base64 of the 64-byte signature over the manifest bytes.' }),
          })
          .meta({ id: 'Signature' }),
      )
      .meta({
        description:
          'Every signature the release carries, one per key, the first being the one in signature, key_id and algorithm. ' +
          'Install only when signatures from the threshold of your trust set verify, each key counted once.',
      }),
    image: z.object({
      url: z.string().meta({ description: 'Path of the image on this server, /api/device/v1/images/<sha256>.' }),
      sha256: z.string().regex(/^[0-9a-f]{64}$/),
      size: z.number().int().min(0),
    }),
  })
  .meta({ id: 'Offer', description: 'The update to install now. Verify the signature and the image digest before installing.' });
export type Offer = z.infer<typeof offerSchema>;

const trustSignatureSchema = z.object({ key_id: z.string(), algorithm: signatureAlgorithmSchema, signature: z.string() });

export const trustSetSchema = z
  .object({
    model: uuid.meta({ description: 'The model the set is for.' }),
    version: z.number().int().min(1).meta({ description: 'Exactly one more than the trust_version the logger sent.' }),
    threshold: z.number().int().min(1).meta({ description: 'How many of these keys must sign a manifest (and the next set).' }),
    keys: z
      .array(
        z.object({
          key_id: z.string(),
          algorithm: signatureAlgorithmSchema,
          public_key: z.string().meta({ description: 'Standard base64 of the DER SubjectPublicKeyInfo; key_id is the first 16 hex characters of its SHA-256.' }),
        }),
      )
      .min(1),
    expires: z.iso.datetime().meta({ description: 'RFC 3339, UTC.' }),
    signatures: z.array(trustSignatureSchema).meta({
      description:
        'Signatures over the RFC 8785 canonical form of this object without signatures, by keys of the PREVIOUS version. Accept it only when signatures from the threshold of the set you hold verify, each key counted once.',
    }),
  })
  .meta({
    id: 'TrustSet',
    description:
      'The next version of the model’s trust set (the keys loggers trust and how many must sign); sent only when trust_version is behind and that version is signed, one version per check-in.',
  });
export type TrustSetWire = z.infer<typeof trustSetSchema>;

export const checkInResponseSchema = z
  .object({
    server_time: z.iso.datetime().meta({ description: 'RFC 3339, UTC.' }),
    next_check_in_s: z.number().int().min(1).meta({
      description: "When to come back, seconds: the model's interval ±10 % jitter, stretched when the server is busy.",
    }),
    config: deviceConfigSchema.nullable(),
    offer: offerSchema.nullable(),
    // Sent only when trust_version is behind and the next version is signed: one version per check-in.
    trust_set: trustSetSchema.optional(),
  })
  .meta({ id: 'CheckInResponse' });
export type CheckInResponse = z.infer<typeof checkInResponseSchema>;

/** An image id in a URL: 64 lowercase hex characters (anything else is 404 before storage is touched). */
export const imageIdPattern = /^[0-9a-f]{64}$/;

/** Where DEVICE_API.md leaves room, what this server does (OpenAPI description and the console's Device API page). */
export const deviceApiChoices: readonly string[] = [
  'Board: the offer decision uses the board revision the logger reports in this check-in (`board`); the registry keeps the label it was registered with.',
  'Supply guard: it judges this check-in\'s `supply_v` as sent (3.2995 V is below a 3.3 V minimum); without one, the latest on record. When no supply voltage was ever reported, the guard does not block (an unknown supply is not below the minimum).',
  'Daylight window: a release that asks for it at a site without coordinates is offered without the window.',
  'When the supply guard or the daylight window blocks the chosen release, nothing is offered at that check-in (no older release instead).',
  'Install reports: a report counts only for a release offered to this logger, or the release whose version it runs; any other report (a release never offered to it, or one this server does not know) answers `409` and the check-in records nothing — drop the report and check in again without it. A failed report without a reason counts as `other`; a `reason` sent with another state is ignored. After a transient failure (connection, low_supply) the offer stands and a new attempt may start with any state; after any other failure further reports are ignored until an operator retries the release.',
  'Report `installed` when the new image has been written and is about to boot, or on the first check-in after booting it. The check-in that carries `installed` may still run the old version; a later check-in on an older version than the release counts as a rollback by the bootloader (failed, other, "rolled back by the bootloader"). A check-in on the release\'s version (or newer) confirms the install.',
  'Reset counts: when neither `reset_counts` nor `resets_since_last` is sent, the check-in records no boots.',
  '`config` is sent when `config_version` is absent or lower than the profile\'s version, and is null when the logger has no measurement profile yet (not enrolled).',
  '`next_check_in_s`: the model\'s check-in interval with ±10 % uniform jitter, stretched up to four times when the server is busy (event-loop delay, database pool queue, check-ins in flight).',
  'Rate limit: 60 check-ins a minute per logger token by default (per server process); above it `429` with `Retry-After`. Overload and an unreachable database answer `503` with `Retry-After`; come back after that many seconds (with jitter of your own).',
  'Images: the route checks the token first (401), then the id — anything but 64 lowercase hex characters is `404` —, then that this logger was offered the image by a live release (else `404`). `HEAD` is answered like `GET` without a body, and ignores `Range` (RFC 9110 §14.2: ranges are defined for GET only). Multiple ranges are answered with the whole image (`200`). An `If-Range` that is an HTTP-date never matches (no `Last-Modified` is sent), so it yields the whole image.',
  'Signatures: an offer carries every signature of its release in `signatures` (one per key); `signature`, `key_id` and `algorithm` repeat the first. A logger installs only when signatures from the threshold of its trust set verify over the manifest bytes, each key counted once.',
  'Trust sets: send `trust_version` with the version of the trust set you hold; when a later one is signed, the answer carries the next version only (`trust_set`), signed by the keys of the version you hold. Accept it only when the threshold of your current set verifies; then check in again for the next one. A pending set (not yet signed) is never sent.',
  'Manifest expiry: a manifest may carry `expires`; from that instant the release is offered to nobody (reason `manifest_expired`), and a logger refuses an expired manifest even if one is offered.',
  'Trip: a release trips (stops by itself) when more than its trip failure ratio of at least its minimum number of finished installs failed (installed + non-transient failures), or when the watchdog and brown-out resets of at least 20 loggers, each observed on it for 24 h or more since confirming it, rose above the trip reset factor × their rate on the versions before (the earlier rate counts as at least 1 reset per 100 logger-days, and is judged only with at least 20 logger-days of check-ins before the release). Both are compared exactly (cross-multiplied with the decimal trip point), so a figure exactly at its trip point does not trip. ' +
    'It also trips on measurement drift: over at least 20 loggers that confirmed it, the median shift of whole UTC days after the install day against up to 7 days before — energy against the clear-sky model at the site (from `readings.energy_wh` between check-ins), `readings.temp_c` above the expected air temperature, and the share of flagged probe readings — corrected by the loggers at the same sites that did not install it, beyond tripDriftEnergy (10 %), tripDriftTempC (3 °C) or tripDriftFlagged (2 percentage points, rising).',
];
