// The code step of signing in: the six digits the authenticator app shows, or one recovery code.
import React from 'react';
import { Text } from 'react-native';
import { AuthFrame } from './auth-frame';
import { Button, Field, Notice, Row } from './ui';
import { type } from './theme';
import { messageFor, sentence, useForm, zodFieldErrors } from './form-state';
import { secondFactorSignInRequest, type SecondFactorSignInRequest } from '../schemas/auth';
import type { ApiError } from '../hooks/api';

type Props = { busy: boolean; error: ApiError | null; onSubmit: (body: SecondFactorSignInRequest) => void; onCancel: () => void };

export function SecondFactorCodeScreen({ busy, error, onSubmit, onCancel }: Props) {
  const form = useForm({ code: '', recoveryCode: '', useRecovery: false });
  const { values } = form;
  const check = () => {
    const body = values.useRecovery ? { recoveryCode: values.recoveryCode } : { code: values.code };
    const found = zodFieldErrors(secondFactorSignInRequest, body);
    form.setErrors(found);
    if (Object.keys(found).length === 0) onSubmit(body);
  };
  const limited = error?.status === 429;
  return (
    <AuthFrame title="Second factor" intro={values.useRecovery ? 'Enter one of the recovery codes you stored when you set up your second factor. Each works once.' : 'Open your authenticator app and enter the 6-digit code it shows for Heliodor.'}>
      {error ? <Notice title={limited ? 'Too many attempts' : error.title} detail={error.detail} /> : null}
      {values.useRecovery ? (
        <Field
          label="Recovery code"
          value={values.recoveryCode}
          onChangeText={(v) => form.set('recoveryCode', v)}
          autoCapitalize="none"
          autoComplete="off"
          mono
          error={sentence(messageFor(form.errors, error, 'recoveryCode'))}
          testID="recovery-code"
          onSubmitEditing={check}
        />
      ) : (
        <Field
          label="Code from your app"
          value={values.code}
          onChangeText={(v) => form.set('code', v)}
          inputMode="numeric"
          autoComplete="one-time-code"
          mono
          error={sentence(messageFor(form.errors, error, 'code'))}
          testID="second-factor-code"
          onSubmitEditing={check}
        />
      )}
      <Button label="Sign in" onPress={check} busy={busy} testID="second-factor-submit" />
      <Row wrap>
        <Button
          label={values.useRecovery ? 'Use the code from my app' : 'Use a recovery code'}
          variant="quiet"
          onPress={() => {
            form.set('useRecovery', !values.useRecovery);
            form.setErrors({});
          }}
        />
        <Button label="Start over" variant="quiet" onPress={onCancel} />
      </Row>
      <Text style={type.small}>Lost your phone and your recovery codes? An admin of your team can turn your second factor off; you then set up a new one.</Text>
    </AuthFrame>
  );
}
