// Parse request parts with the shared zod schemas; failures become 400 problem+json naming the fields.
import type { z } from 'zod';
import { problems, type FieldError } from './problem';

export function fieldErrors(error: z.ZodError): FieldError[] {
  return error.issues.map((issue) => ({
    path: issue.path.length ? issue.path.map(String).join('.') : '(body)',
    message: issue.message,
  }));
}

export function parse<S extends z.ZodType>(schema: S, value: unknown, where = 'body'): z.infer<S> {
  const result = schema.safeParse(value ?? {});
  if (!result.success) {
    const errors = fieldErrors(result.error);
    const names = [...new Set(errors.map((e) => e.path))].join(', ');
    throw problems.badRequest(`Check the ${where}: ${names}.`, errors);
  }
  return result.data;
}
