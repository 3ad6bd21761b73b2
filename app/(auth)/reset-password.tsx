import React from 'react';
import { ResetPasswordScreen } from '../../components/password-screens';
import { useLinkToken } from '../../components/link-token';
import { useConfirmPasswordReset } from '../../hooks/account';
import { ApiError } from '../../hooks/api';

export default function ResetPassword() {
  const token = useLinkToken();
  const confirm = useConfirmPasswordReset();
  return (
    <ResetPasswordScreen
      hasToken={Boolean(token)}
      busy={confirm.isPending}
      error={confirm.error instanceof ApiError ? confirm.error : null}
      done={confirm.data?.detail ?? null}
      onSubmit={(password) => token && confirm.mutate({ token, password })}
    />
  );
}
