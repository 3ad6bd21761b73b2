// The wiring every console form shares: a react-hook-form form checked by a schema from schemas/
// (through the zod resolver), text fields and messages bound to it, the conversions from what a
// person types to what the API takes, and the server's field errors put back on the fields.
import React from 'react';
import { Text } from 'react-native';
import { z } from 'zod';
import { zodResolver } from '@hookform/resolvers/zod';
import {
  get,
  useController,
  useForm,
  useFormState,
  type Control,
  type DefaultValues,
  type FieldPath,
  type FieldValues,
  type UseFormReturn,
} from 'react-hook-form';
import { Field } from './ui';
import { Choices, type Choice } from './choice';
import { colors, type } from './theme';

// ─── From typed text to the wire ─────────────────────────────────────────────

/**
 * A number as typed: blank is `blank` (undefined: not given; null: cleared), a decimal comma is read
 * as a point, and anything else that is not a number stays NaN so the shared rule refuses it.
 */
export function decimal(text: string): number | undefined;
export function decimal(text: string, blank: null): number | null;
export function decimal(text: string, blank: null | undefined = undefined): number | null | undefined {
  const t = text.trim().replace(',', '.');
  return t === '' ? blank : Number(t);
}

/** A text field that the API takes as a number; the rule is the shared schema's, piped after it. */
export const decimalText = (blank: null | undefined = undefined) => z.string().transform((text) => (blank === null ? decimal(text, null) : decimal(text)));

/**
 * A form's schema: `fields` reads the form's values and turns them into the API's types (numbers from
 * text, units) without rules of its own; the shared schema `wire` then checks the result, so each
 * rule is the one in schemas/ and its message lands on the field of the same name. What `fields`
 * gives is not yet checked (a choice may be missing, a number NaN): that is the wire's to refuse.
 */
export function formSchema<Fields extends z.ZodType, Wire extends z.ZodType>(fields: Fields, wire: Wire): z.ZodType<z.output<Wire>, z.input<Fields>> {
  return fields.pipe(wire as never) as never;
}

// ─── The form ────────────────────────────────────────────────────────────────

type SchemaFormOptions<Values extends FieldValues> = {
  defaultValues: DefaultValues<Values>;
  /**
   * What to say when a choice was left empty (a site, a model), keyed by field name. The shared
   * schemas word their rules for values that were sent; an empty choice is the form's to word.
   */
  missing?: Record<string, string>;
};

/**
 * A form checked by `schema` when it is submitted and, after that, as fields change. The schema's
 * input is the form's values; its output is what `whenValid` hands on (the API's request).
 */
export function useSchemaForm<S extends z.ZodType<unknown, FieldValues>>(
  schema: S,
  { defaultValues, missing = {} }: SchemaFormOptions<ValuesOf<S>>,
): UseFormReturn<ValuesOf<S>, unknown, z.output<S>> {
  const resolver = zodResolver(schema as never, {
    // Per-parse messages only apply where the schema gives none, e.g. a string that is undefined.
    error: (issue: { input?: unknown; path?: PropertyKey[] }) => (issue.input === undefined ? missing[(issue.path ?? []).join('.')] : undefined),
  });
  return useForm<ValuesOf<S>, unknown, z.output<S>>({ resolver: resolver as never, defaultValues });
}

/** The values a form holds: its schema's input. */
type ValuesOf<S extends z.ZodType> = z.input<S> extends FieldValues ? z.input<S> : never;

/**
 * A press handler that checks the form and, when every rule holds, hands the schema's output to
 * `send`. Only the values go on: a press event is neither passed along nor cancelled.
 */
export function whenValid<Output>(form: Pick<UseFormReturn<any, unknown, Output>, 'handleSubmit'>, send: (values: Output) => void): () => void {
  return () => void form.handleSubmit((values) => send(values))();
}

// ─── Fields bound to a form ──────────────────────────────────────────────────

type FieldProps = React.ComponentProps<typeof Field>;

/** A text field bound to a form's control: its value, and the message of its rule or of the server. */
export function FormField<Values extends FieldValues>({
  control,
  name,
  showError = true,
  ...field
}: Omit<FieldProps, 'value' | 'onChangeText' | 'onBlur' | 'error'> & {
  control: Control<Values, unknown, any>;
  name: FieldPath<Values>;
  /** Off where the message is shown elsewhere (below a row of controls). */
  showError?: boolean;
}) {
  const { field: bound, fieldState } = useController({ control, name });
  return (
    <Field
      {...field}
      value={(bound.value as string | undefined) ?? ''}
      onChangeText={bound.onChange}
      onBlur={bound.onBlur}
      error={showError ? fieldState.error?.message : undefined}
    />
  );
}

/** A row of choices bound to a form's control. */
export function FormChoices<Values extends FieldValues, T extends string | number>({
  control,
  name,
  onChange,
  ...choices
}: {
  control: Control<Values, unknown, any>;
  name: FieldPath<Values>;
  label?: string;
  choices: readonly Choice<T>[];
  /** Called after the value changed (e.g. to clear a choice that depends on this one). */
  onChange?: (value: T) => void;
  testID?: string;
}) {
  const { field, fieldState } = useController({ control, name });
  return (
    <Choices<T>
      {...choices}
      value={field.value as T | undefined}
      onChange={(value) => {
        field.onChange(value);
        onChange?.(value);
      }}
      error={fieldState.error?.message}
    />
  );
}

/** The message on a field, from its rule or the server; also for a field that groups others (a signed part). */
export function useFieldMessage<Values extends FieldValues>(control: Control<Values, unknown, any>, name: FieldPath<Values>): string | undefined {
  const { errors } = useFormState({ control, name, exact: true });
  return (get(errors, name) as { message?: string } | undefined)?.message;
}

/** The message of a field drawn by other controls (chips, a list of sites), where its rule or the server put one. */
export function FieldMessage<Values extends FieldValues>({ control, name }: { control: Control<Values, unknown, any>; name: FieldPath<Values> }) {
  const message = useFieldMessage(control, name);
  return message ? (
    <Text role="alert" style={[type.small, { color: colors.ember }]}>
      {message}
    </Text>
  ) : null;
}

/** A list value with one item added or taken away (boards, pilot sites, scopes, integrators). */
export function toggled<T>(list: readonly T[], item: T): T[] {
  return list.includes(item) ? list.filter((x) => x !== item) : [...list, item];
}

// ─── The server's field errors ───────────────────────────────────────────────

type FieldErrorLike = { path: string; message: string };

/** The field errors of a problem+json answer (hooks/api.ts ApiError.fieldErrors), or none. */
export function fieldErrorsOf(error: unknown): FieldErrorLike[] {
  const list = (error as { fieldErrors?: unknown } | null | undefined)?.fieldErrors;
  return Array.isArray(list) ? (list as FieldErrorLike[]).filter((e) => typeof e?.path === 'string' && typeof e?.message === 'string') : [];
}

/**
 * Which form field each of the server's field errors belongs to, with its message: a path names a
 * field itself ("name") or a part of it ("manifest.version" belongs to "manifest", said as
 * "Manifest version: …" with `labels`). Several messages for one field are said together.
 */
export function serverFieldMessages(errors: FieldErrorLike[], fields: readonly string[], labels: Record<string, string> = {}): Map<string, string> {
  const messages = new Map<string, string[]>();
  for (const { path, message } of errors) {
    const field = fields.find((f) => path === f || path.startsWith(`${f}.`));
    if (!field) continue;
    const said = path === field ? message : `${labels[path] ?? path}: ${message}`;
    messages.set(field, [...(messages.get(field) ?? []), said]);
  }
  return new Map([...messages].map(([field, said]) => [field, said.join(' ')]));
}

/**
 * Puts the server's field errors on the form's fields each time a new answer arrives; they stay
 * until the field is checked again (after the first submit, as it changes) or the form is sent.
 * `fields` are the names the server's paths may land on (default: the form's own values).
 */
export function useServerErrors<Values extends FieldValues>(
  form: Pick<UseFormReturn<Values, any, any>, 'setError' | 'getValues'>,
  error: unknown,
  { fields, labels }: { fields?: readonly string[]; labels?: Record<string, string> } = {},
) {
  const { setError, getValues } = form;
  const names = fields?.join('\n');
  React.useEffect(() => {
    const errors = fieldErrorsOf(error);
    if (!errors.length) return;
    const known = names ? names.split('\n') : Object.keys(getValues());
    for (const [field, message] of serverFieldMessages(errors, known, labels)) {
      setError(field as FieldPath<Values>, { type: 'server', message });
    }
    // Only a new answer from the server puts its errors back (the form and names are steady).
  }, [error]);
}
