import React from 'react';
import { ForgotPasswordScreen } from '../../components/password-screens';
import { useRequestPasswordReset } from '../../hooks/account';
import { ApiError } from '../../hooks/api';

export default function ForgotPassword() {
  const request = useRequestPasswordReset();
  return (
    <ForgotPasswordScreen
      busy={request.isPending}
      error={request.error instanceof ApiError ? request.error : null}
      sent={request.data?.detail ?? null}
      onSubmit={(email) => request.mutate(email)}
    />
  );
}
