// Shapes shared by every resource: identifiers, list envelope, problem details.
import { z } from 'zod';

/** UUIDs in lowercase canonical text form (DEVICE_API.md, Identifiers). */
export const uuid = z.string().regex(/^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/, 'must be a lowercase UUID');

export const idParams = z.object({ id: uuid });

export function listOf<T extends z.ZodType>(row: T) {
  return z.object({ rows: z.array(row), total: z.number().int().nonnegative(), nextCursor: z.string().optional() });
}
export type List<T> = { rows: T[]; total: number; nextCursor?: string };

export const problemSchema = z.object({
  type: z.string(),
  title: z.string(),
  status: z.number().int(),
  detail: z.string(),
  instance: z.string().optional(),
  errors: z.array(z.object({ path: z.string(), message: z.string(), line: z.number().int().optional() })).optional(),
});
export type Problem = z.infer<typeof problemSchema>;

/** Trimmed text with a length limit; blank is refused unless optional. */
export const text = (max: number, min = 1) => z.string().trim().min(min, min === 1 ? 'is required' : `needs at least ${min} characters`).max(max, `at most ${max} characters`);
