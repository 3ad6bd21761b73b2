// Logger registry shapes shared by the console API, the client forms and the OpenAPI documents.
// Console API is camelCase; the device API spells the same profile fields in snake_case (DEVICE_API.md `config`).
import { z } from 'zod';
import { text, uuid } from './common';
import { fleetFilterFields, type FleetRow } from './fleet';
import type { CommissioningFigures, CommissioningVerdict, FirstReading } from '../lib/commissioning';
import { CHANNELS, LOGGER_STATUSES, type Channel, type CommissioningState, type FleetFlag, type LoggerStatus, type UpdateState } from './words';

// ─── Identity ────────────────────────────────────────────────────────────────

/** Serials: 3–40 characters of A–Z a–z 0–9 - _ . (after trimming); safe in a CSV cell, a file name and a label. */
export const serialPattern = /^[A-Za-z0-9._-]{3,40}$/;
export const serialRule = 'must be 3 to 40 characters of letters, digits, "-", "_" or "."';
export const serial = z.string().trim().regex(serialPattern, serialRule);

/** Board revision label as the model lists it, e.g. "B". */
export const boardLabel = text(20);

export const channel = z.enum(CHANNELS, { message: `must be ${CHANNELS.join(' or ')}` });
export type { Channel, LoggerStatus };

// ─── Registration ────────────────────────────────────────────────────────────

export const registerLoggerRequest = z.object({
  serial,
  modelId: uuid,
  board: boardLabel,
  channel: channel.default('stable'),
});
export type RegisterLoggerRequest = z.infer<typeof registerLoggerRequest>;

// ─── Install details and measurement profile ────────────────────────────────

/** Temperature probe resolutions the probe family offers (9 to 12 bits); a model may allow fewer. */
export const tempResolutionBitsOptions = [9, 10, 11, 12] as const;
export const tempResolutionBits = z.literal(tempResolutionBitsOptions, { message: 'must be 9, 10, 11 or 12 bits' });
export type TempResolutionBits = z.infer<typeof tempResolutionBits>;

const above0 = (max: number, unit: string) =>
  z.number({ message: 'must be a number' }).gt(0, 'must be above 0').max(max, `at most ${max} ${unit}`);

/** What the integrator enters on site; the measurement profile is computed from it. */
export const installDetails = z.object({
  panelWp: above0(2000, 'Wp'),
  panelVocV: above0(100, 'V'),
  shuntOhm: above0(1, 'Ω'),
  maxCurrentA: above0(100, 'A'),
  tempResolutionBits,
  /** The panel's temperature coefficient of Voc from its data sheet, %/°C (about −0.25 to −0.35 for crystalline silicon). */
  vocTempCoeffPctPerC: z
    .number({ message: 'must be a number' })
    .min(-1, 'must be between -1 and 0 %/°C (a negative number from the panel data sheet)')
    .max(0, 'must be between -1 and 0 %/°C (a negative number from the panel data sheet)')
    .nullable()
    .optional(),
  notes: z.string().trim().max(500, 'at most 500 characters').optional(),
});
export type InstallDetails = z.infer<typeof installDetails>;

/** The profile a logger runs (DEVICE_API.md `config`, camelCase here). */
export const measurementProfile = z.object({
  version: z.number().int().min(1),
  shuntOhm: z.number().positive(),
  maxCurrentA: z.number().positive(),
  currentLsbA: z.number().positive(),
  calibration: z.number().int().min(1).max(32767),
  powerLsbW: z.number().positive(),
  busVMax: z.number().positive(),
  tempResolutionBits,
  sampleIntervalS: z.number().int().positive(),
});
export type MeasurementProfile = z.infer<typeof measurementProfile>;

// ─── Console API: registry requests and views ───────────────────────────────


export const pageSizes = [25, 50, 100] as const;

/** The fleet table's query: filters, allow-listed sort keys, a keyset cursor or a page. */
export const loggersQuery = z.object({
  ...fleetFilterFields,
  status: z.enum(LOGGER_STATUSES, { message: `must be one of ${LOGGER_STATUSES.join(', ')}` }).optional(),
  page: z.coerce.number({ message: 'must be a number' }).int().min(1, 'pages count from 1').default(1),
  pageSize: z.coerce
    .number({ message: 'must be a number' })
    .refine((n) => (pageSizes as readonly number[]).includes(n), 'must be 25, 50 or 100')
    .default(25),
});
export type LoggersQuery = z.infer<typeof loggersQuery>;

/** A logger token as printed on the label, or the label's whole enrollment link (`…/enroll?t=<token>`). */
export const loggerTokenInput = z
  .string({ message: 'is required' })
  .trim()
  .min(1, 'is required')
  .max(2000, 'at most 2000 characters')
  .transform((value, ctx) => {
    let token = value;
    if (/^https?:\/\//i.test(value)) {
      try {
        token = new URL(value).searchParams.get('t') ?? '';
      } catch {
        token = '';
      }
    }
    if (!/^hlt_[A-Za-z0-9_-]{43}$/.test(token)) {
      ctx.addIssue({ code: 'custom', message: 'must be a logger token (hlt_ and 43 more characters) or the label\'s enrollment link' });
      return z.NEVER;
    }
    return token;
  });

export const enrollmentLookupRequest = z.object({ token: loggerTokenInput });

/**
 * An enrollment. `enrollmentId` is the phone's own id for it (a UUID made when the integrator presses
 * Enroll): sending the same enrollment again, as a phone does when it cannot tell whether its first try
 * arrived, gets the first answer back instead of a second enrollment; the same id with different
 * contents is refused (422). Without it every request is a new attempt.
 */
export const enrollRequest = installDetails.extend({ token: loggerTokenInput, siteId: uuid, enrollmentId: uuid.optional() });
export type EnrollRequest = z.infer<typeof enrollRequest>;

export const moveLoggerRequest = z.object({ siteId: uuid });

export const retireLoggerRequest = z.object({ reason: z.string().trim().max(500, 'at most 500 characters').optional() });

/** A profile change: panel values default to the current ones. */
export const profileChangeRequest = installDetails
  .pick({ shuntOhm: true, maxCurrentA: true, tempResolutionBits: true, vocTempCoeffPctPerC: true })
  .extend({ panelWp: installDetails.shape.panelWp.optional(), panelVocV: installDetails.shape.panelVocV.optional() });
export type ProfileChangeRequest = z.infer<typeof profileChangeRequest>;

/** The profile as the console shows it: the device fields plus the panel it was computed for. */
export type ProfileView = MeasurementProfile & { panelWp: number | null; panelVocV: number | null; createdAt: string };

/** A row of the fleet table (GET /api/loggers): declared column by column in schemas/fleet.ts. */
export type LoggerRow = FleetRow;

/** What a person may do with a logger (its answers' `can`, from server/auth/policies.ts). */
export const LOGGER_VERBS = ['enroll', 'move', 'retire', 'rotateToken', 'editProfile', 'addNote', 'addPhoto'] as const;
export type LoggerVerb = (typeof LOGGER_VERBS)[number];
export type LoggerCan = Record<LoggerVerb, boolean>;

export type LoggerDetail = {
  id: string;
  serial: string;
  modelId: string;
  modelName: string;
  board: string;
  channel: Channel;
  status: LoggerStatus;
  /** Enrolled and seen within three check-in intervals. */
  online: boolean;
  /** `timeZone`: the site's IANA zone, in which the logger's timeline is shown (lib/site-time.ts); `minTempC`: its lowest expected temperature. */
  site: { id: string; name: string; customer: string; timeZone: string; minTempC: number | null } | null;
  enrolledAt: string | null;
  enrolledBy: { id: string; name: string } | null;
  install: { panelWp: number | null; panelVocV: number | null; vocTempCoeffPctPerC: number | null; notes: string; photo: boolean } | null;
  profile: ProfileView | null;
  firmware: string | null;
  lastSeenAt: string | null;
  supplyV: number | null;
  tokenIssuedAt: string | null;
  retiredAt: string | null;
  createdAt: string;
  /** What the caller may do with it now: its status, their role and (integrators) their sites together. */
  can: LoggerCan;
  /** The CSV batch it was registered in, with how many of its loggers still wait for enrollment; null when registered alone. */
  batch: (BatchSummary & { waiting: number }) | null;
};

/** A CSV batch of loggers as registered. */
export type BatchSummary = { id: string; fileName: string; registeredAt: string; count: number };

/** Issued once, at registration or rotation: the token in clear and its label. */
export type IssuedLogger = { id: string; serial: string; board: string; channel: Channel; modelId: string; modelName: string; token: string; labelPng: string };
export type RotatedToken = { token: string; labelPng: string; serial: string; modelName: string; board: string };
export type BatchRegistered = { rows: { id: string; serial: string; token: string; board: string; channel: Channel; modelName: string }[]; total: number; batch: BatchSummary };
/**
 * The answer to issuing a batch's labels again: a new token for every logger of the batch still waiting
 * for enrollment (shown once, as at registration), and the loggers left as they were (enrolled or retired).
 */
export type BatchLabelsIssued = BatchRegistered & { skipped: { serial: string; status: LoggerStatus }[] };
/** The answer to POST /api/enrollments: the enrolled logger and its first measurement profile. */
export type Enrolled = { logger: LoggerDetail; profile: ProfileView };
export type EnrollmentLookup = {
  logger: { id: string; serial: string; modelId: string; modelName: string; board: string; status: LoggerStatus; site: { id: string; name: string; minTempC: number | null } | null };
  limits: { busVMax: number; shuntFullScaleV: number; tempResolutions: number[] };
};

/**
 * A logger's first-readings check (GET /api/loggers/:id/commissioning): the verdict and figures kept with the
 * logger once judged; while waiting, the rule on the readings so far with today's figures.
 */
export type CommissioningView = {
  state: CommissioningState;
  /** The counted readings (at most lib/commissioning.ts FIRST_READINGS_COUNTED). */
  readings: FirstReading[];
  figures: CommissioningFigures | null;
  verdict: CommissioningVerdict | null;
  startedAt: string | null;
  judgedAt: string | null;
  /** Why the readings cannot be checked yet (not enrolled, no panel voltage), or null. */
  problem: string | null;
  can: { restart: boolean };
};
