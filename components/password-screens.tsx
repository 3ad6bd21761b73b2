// Forgotten password: ask for a link by e-mail; then choose a new password from the link.
import React from 'react';
import { Text } from 'react-native';
import { z } from 'zod';
import { AuthFrame, AuthLink } from './auth-frame';
import { Button, Field, Notice } from './ui';
import { type } from './theme';
import { messageFor, sentence, useForm, type FieldErrors } from './form-state';
import { emailSchema, passwordSchema } from '../schemas/auth';
import type { ApiError } from '../hooks/api';

export const PASSWORD_HINT = 'At least 12 characters; a few unrelated words work well. Spaces and any characters are fine.';

export function ForgotPasswordScreen({ busy, error, sent, onSubmit }: { busy: boolean; error: ApiError | null; sent: string | null; onSubmit: (email: string) => void }) {
  const form = useForm({ email: '' });
  const submit = () => form.submit(z.object({ email: emailSchema }), (v) => onSubmit(v.email));
  return (
    <AuthFrame title="Forgotten password" intro="Enter the e-mail address you sign in with. If it belongs to someone on the team, a link to choose a new password arrives within a few minutes.">
      {sent ? <Notice tone="moss" title="Check your e-mail" detail={sent} /> : null}
      {error ? <Notice title={error.status === 429 ? 'Too many requests' : error.title} detail={error.detail} /> : null}
      <Field
        label="E-mail"
        value={form.values.email}
        onChangeText={(v) => form.set('email', v)}
        autoCapitalize="none"
        autoComplete="email"
        inputMode="email"
        error={sentence(messageFor(form.errors, error, 'email'))}
        testID="reset-email"
        onSubmitEditing={submit}
      />
      <Button label={sent ? 'Send another link' : 'Send the link'} onPress={submit} busy={busy} testID="reset-send" />
      <AuthLink href="/sign-in" label="Back to sign-in" />
    </AuthFrame>
  );
}

type PasswordPair = { values: { password: string; repeat: string }; errors: FieldErrors; set: (name: 'password' | 'repeat', value: string) => void };

/** A new password typed twice, with the password rule as its hint; the server's field error lands on the first. */
export function NewPasswordFields({ form, error, label, testID, onSubmit }: { form: PasswordPair; error: ApiError | null; label: string; testID: string; onSubmit: () => void }) {
  return (
    <>
      <Field
        label={label}
        value={form.values.password}
        onChangeText={(v) => form.set('password', v)}
        secureTextEntry
        autoComplete="new-password"
        hint={PASSWORD_HINT}
        error={sentence(messageFor(form.errors, error, 'password'))}
        testID={testID}
      />
      <Field
        label={`${label} again`}
        value={form.values.repeat}
        onChangeText={(v) => form.set('repeat', v)}
        secureTextEntry
        autoComplete="new-password"
        error={sentence(form.errors.repeat)}
        testID={`${testID}-repeat`}
        onSubmitEditing={onSubmit}
      />
    </>
  );
}

/** A new password, typed twice; the same rules as the server (OWASP ASVS 4.0 §2.1). */
export const newPasswordForm = z
  .object({ password: passwordSchema, repeat: z.string() })
  .refine((v) => v.password === v.repeat, { message: 'does not match the password above', path: ['repeat'] });

export function ResetPasswordScreen({ hasToken, busy, error, done, onSubmit }: { hasToken: boolean; busy: boolean; error: ApiError | null; done: string | null; onSubmit: (password: string) => void }) {
  const form = useForm({ password: '', repeat: '' });
  const submit = () => form.submit(newPasswordForm, (v) => onSubmit(v.password));
  if (!hasToken) {
    return (
      <AuthFrame title="Choose a new password" intro="Open this page from the link in the password-reset e-mail. The link works once, for one hour.">
        <AuthLink href="/forgot-password" label="Ask for a new link" />
      </AuthFrame>
    );
  }
  if (done) {
    return (
      <AuthFrame title="Password changed" intro={done}>
        <AuthLink href="/sign-in" label="Sign in" testID="reset-sign-in" />
      </AuthFrame>
    );
  }
  const expired = error?.status === 410;
  return (
    <AuthFrame title="Choose a new password" intro="Setting a new password signs you out wherever you are signed in.">
      {error ? <Notice title={error.title} detail={error.detail} /> : null}
      {expired ? <AuthLink href="/forgot-password" label="Ask for a new link" /> : null}
      <NewPasswordFields form={form} error={error} label="New password" testID="new-password" onSubmit={submit} />
      <Button label="Set the new password" onPress={submit} busy={busy} testID="reset-confirm" />
      <Text style={type.small}>A second factor, if you have one, stays on.</Text>
    </AuthFrame>
  );
}
