// Logger models (hardware designs) and their board revisions: shapes shared by the console API and the client.
import { z } from 'zod';
import { text } from './common';
import { boardLabel, tempResolutionBits } from './loggers';

export const boardRevision = z.object({
  label: boardLabel,
  note: z.string().trim().max(200, 'at most 200 characters').default(''),
});
export type BoardRevision = z.infer<typeof boardRevision>;

const boards = z
  .array(boardRevision)
  .min(1, 'list at least one board revision')
  .max(26, 'at most 26 board revisions')
  .superRefine((list, ctx) => {
    // Labels are compared without case: "b" and "B" on a label or in a CSV are the same board.
    const seen = new Map<string, number>();
    list.forEach((b, i) => {
      const key = b.label.toLowerCase();
      const first = seen.get(key);
      if (first !== undefined) ctx.addIssue({ code: 'custom', path: [i, 'label'], message: `board revision "${b.label}" is listed twice` });
      else seen.set(key, i);
    });
  });

const tempResolutions = z
  .array(tempResolutionBits)
  .min(1, 'allow at least one probe resolution')
  .refine((list) => new Set(list).size === list.length, 'each resolution once')
  .transform((list) => [...list].sort((a, b) => a - b));

const modelFields = {
  name: text(80),
  boards,
  /** Supply guard: no update offer below this supply voltage. */
  minUpdateSupplyV: z.number({ message: 'must be a number' }).min(0, 'must be 0 V or more').max(60, 'at most 60 V'),
  checkInIntervalS: z.number({ message: 'must be a number' }).int('must be whole seconds').min(60, 'at least 60 s').max(86400, 'at most 86400 s (one day)'),
  /** Highest voltage the power-monitor chip's bus input may see. */
  busVMax: z.number({ message: 'must be a number' }).gt(0, 'must be above 0 V').max(100, 'at most 100 V'),
  /** Shunt voltage at the power-monitor chip's full scale (81.92 mV for the usual chip). */
  shuntFullScaleV: z.number({ message: 'must be a number' }).gt(0, 'must be above 0 V').max(1, 'at most 1 V'),
  tempResolutions,
};

export const createModelRequest = z.object(modelFields);
export type CreateModelRequest = z.infer<typeof createModelRequest>;

/** How many distinct registered, unrevoked signing keys must sign each release of the model (k of n). */
export const signingThresholdSchema = z
  .number({ message: 'must be a whole number of keys' })
  .int('must be a whole number of keys')
  .min(1, 'at least 1 key')
  .max(16, 'at most 16 keys');

export const updateModelRequest = z
  .object({ ...modelFields, signingThreshold: signingThresholdSchema })
  .partial()
  .refine((body) => Object.values(body).some((v) => v !== undefined), 'change at least one field');
export type UpdateModelRequest = z.infer<typeof updateModelRequest>;

/** What a person may do with a model (its answers' `can`, from server/auth/policies.ts). */
export const MODEL_VERBS = ['edit'] as const;
export type ModelVerb = (typeof MODEL_VERBS)[number];
export type ModelCan = Record<ModelVerb, boolean>;

export type LoggerModelView = {
  id: string;
  name: string;
  boards: BoardRevision[];
  minUpdateSupplyV: number;
  checkInIntervalS: number;
  busVMax: number;
  shuntFullScaleV: number;
  tempResolutions: number[];
  /** Signatures by distinct registered, unrevoked keys each release needs before its pilot (k of n). */
  signingThreshold: number;
  /** Loggers of this model that are not retired. */
  loggerCount: number;
  createdAt: string;
  can: ModelCan;
};
