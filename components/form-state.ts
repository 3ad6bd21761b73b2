// Form state for the account and team screens: one state object per form, checked with the shared zod
// schema from schemas/ (the same the server parses with), so each form moves to react-hook-form with
// the zod resolver without changing its rules.
import React from 'react';
import type { z } from 'zod';

export type FieldErrors = Record<string, string>;

/** The first message per field path of a failed parse, or {} when the value passes. */
export function zodFieldErrors(schema: z.ZodType, value: unknown): FieldErrors {
  const result = schema.safeParse(value);
  if (result.success) return {};
  const errors: FieldErrors = {};
  for (const issue of result.error.issues) {
    const key = issue.path.map(String).join('.') || '(form)';
    errors[key] ??= issue.message;
  }
  return errors;
}

/** One object for the form's values, a setter per field, and the errors of the last submit. */
export function useForm<T extends Record<string, unknown>>(initial: T) {
  const [values, setValues] = React.useState<T>(initial);
  const [errors, setErrors] = React.useState<FieldErrors>({});
  const set = React.useCallback(<K extends keyof T>(key: K, value: T[K]) => setValues((v) => ({ ...v, [key]: value })), []);
  const reset = React.useCallback(() => {
    setValues(initial);
    setErrors({});
  }, [initial]);
  /** Checks the values against the schema; calls `ok` with the parsed values when they pass. */
  const submit = <S extends z.ZodType>(schema: S, ok: (parsed: z.infer<S>) => void, extra: FieldErrors = {}) => {
    const found = { ...zodFieldErrors(schema, values), ...extra };
    setErrors(found);
    if (Object.keys(found).length === 0) ok(schema.parse(values));
  };
  return { values, set, errors, setErrors, submit, reset };
}

/** A field's message: what the form found, else what the server said about it. */
export const messageFor = (errors: FieldErrors, server: { field?: (p: string) => string | undefined } | null | undefined, path: string) =>
  errors[path] ?? server?.field?.(path);

/** Sentence case for a zod message shown under its field ("must be…" → "Must be…"). */
export const sentence = (m: string | undefined) => (m ? m.charAt(0).toUpperCase() + m.slice(1) + (/[.!?]$/.test(m) ? '' : '.') : undefined);
