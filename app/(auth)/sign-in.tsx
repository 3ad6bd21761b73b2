import React from 'react';
import { Redirect, useLocalSearchParams } from 'expo-router';
import { SignInScreen } from '../../components/sign-in-screen';
import { SecondFactorCodeScreen } from '../../components/second-factor-code';
import { AuthLink } from '../../components/auth-frame';
import { useMe, useSecondFactorSignIn, useSignIn } from '../../hooks/session';
import { ApiError } from '../../hooks/api';

const asApiError = (e: unknown) => (e instanceof ApiError ? e : e ? new ApiError(0, { title: 'Sign-in failed', detail: String(e) }) : null);

export default function SignIn() {
  const { next } = useLocalSearchParams<{ next?: string }>();
  const me = useMe();
  const signIn = useSignIn();
  const code = useSecondFactorSignIn();
  const target = typeof next === 'string' && next.startsWith('/') && !next.startsWith('//') ? next : '/';
  if (me.data) return <Redirect href={target as never} />;
  if (signIn.data?.step === 'second_factor') {
    return (
      <SecondFactorCodeScreen
        busy={code.isPending}
        error={asApiError(code.error)}
        onSubmit={(body) => code.mutate(body)}
        onCancel={() => {
          code.reset();
          signIn.reset();
        }}
      />
    );
  }
  return (
    <SignInScreen
      busy={signIn.isPending}
      error={asApiError(signIn.error)}
      onSubmit={(email, password) => signIn.mutate({ email, password })}
      footer={<AuthLink href="/forgot-password" label="Forgot your password?" testID="forgot-password" />}
    />
  );
}
