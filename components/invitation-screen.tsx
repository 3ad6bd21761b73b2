// An invitation link, opened: who invited whom and as what, then the name and password to join with.
import React from 'react';
import { Text, View } from 'react-native';
import { z } from 'zod';
import { AuthFrame, AuthLink } from './auth-frame';
import { Badge, Button, Field, Notice, Skeleton } from './ui';
import { space, type } from './theme';
import { messageFor, sentence, useForm } from './form-state';
import { NewPasswordFields } from './password-screens';
import { absoluteTime } from './format';
import { passwordSchema, personNameSchema, roleNames } from '../schemas/auth';
import type { InvitationView } from '../schemas/team';
import type { ApiError } from '../hooks/api';

const joinForm = z
  .object({ name: personNameSchema, password: passwordSchema, repeat: z.string() })
  .refine((v) => v.password === v.repeat, { message: 'does not match the password above', path: ['repeat'] });

type Props = {
  hasToken: boolean;
  invitation: { data?: InvitationView; isPending: boolean; error: Error | null };
  busy: boolean;
  error: ApiError | null;
  onJoin: (name: string, password: string) => void;
};

export function InvitationScreen({ hasToken, invitation, busy, error, onJoin }: Props) {
  const form = useForm({ name: '', password: '', repeat: '' });
  const submit = () => form.submit(joinForm, (v) => onJoin(v.name, v.password));
  if (!hasToken) {
    return (
      <AuthFrame title="Join the team" intro="Open this page from the link in your invitation e-mail.">
        <AuthLink href="/sign-in" label="Sign in instead" />
      </AuthFrame>
    );
  }
  if (invitation.isPending) {
    return (
      <AuthFrame title="Join the team">
        <Skeleton rows={3} />
      </AuthFrame>
    );
  }
  const inv = invitation.data;
  if (!inv) {
    const e = invitation.error as (Error & { title?: string; detail?: string }) | null;
    return (
      <AuthFrame title="Join the team">
        <Notice title={e?.title ?? 'This invitation cannot be opened'} detail={e?.detail ?? e?.message} />
        <AuthLink href="/sign-in" label="Sign in instead" />
      </AuthFrame>
    );
  }
  return (
    <AuthFrame title="Join the team" intro={`${inv.invitedBy ?? 'An admin'} invited ${inv.email} to Heliodor.`}>
      <View style={{ gap: space.xs }}>
        <Text style={type.label}>Your role</Text>
        <Badge label={roleNames[inv.role]} tone="slate" testID="invitation-role" />
        <Text style={type.small}>The link works once, until {absoluteTime(inv.expiresAt)}.</Text>
      </View>
      {error ? <Notice title={error.title} detail={error.detail} /> : null}
      <Field label="Your name, as the team will see it" value={form.values.name} onChangeText={(v) => form.set('name', v)} autoComplete="name" error={sentence(messageFor(form.errors, error, 'name'))} testID="join-name" />
      <NewPasswordFields form={form} error={error} label="Password" testID="join-password" onSubmit={submit} />
      <Button label="Join the team" onPress={submit} busy={busy} testID="join" />
    </AuthFrame>
  );
}
