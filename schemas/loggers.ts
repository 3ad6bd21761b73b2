// Logger registry shapes shared by the console API, the client forms and the OpenAPI documents.
// Console API is camelCase; the device API spells the same profile fields in snake_case (DEVICE_API.md `config`).
import { z } from 'zod';
import { text, uuid } from './common';

// ─── Identity ────────────────────────────────────────────────────────────────

/** Serials: 3–40 characters of A–Z a–z 0–9 - _ . (after trimming); safe in a CSV cell, a file name and a label. */
export const serialPattern = /^[A-Za-z0-9._-]{3,40}$/;
export const serialRule = 'must be 3 to 40 characters of letters, digits, "-", "_" or "."';
export const serial = z.string().trim().regex(serialPattern, serialRule);

/** Board revision label as the model lists it, e.g. "B". */
export const boardLabel = text(20);

export const tracks = ['stable', 'early'] as const;
export const track = z.enum(tracks, { message: 'must be stable or early' });
export type Track = z.infer<typeof track>;

// ─── Registration ────────────────────────────────────────────────────────────

export const registerLoggerRequest = z.object({
  serial,
  modelId: uuid,
  board: boardLabel,
  track: track.default('stable'),
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
