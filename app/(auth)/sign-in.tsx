import React from 'react';
import { Redirect, useLocalSearchParams } from 'expo-router';
import { SignInScreen } from '../../components/sign-in-screen';
import { useMe, useSignIn } from '../../hooks/session';
import { ApiError } from '../../hooks/api';

export default function SignIn() {
  const { next } = useLocalSearchParams<{ next?: string }>();
  const me = useMe();
  const signIn = useSignIn();
  const target = typeof next === 'string' && next.startsWith('/') && !next.startsWith('//') ? next : '/';
  if (me.data) return <Redirect href={target as never} />;
  const error = signIn.error instanceof ApiError ? signIn.error : signIn.error ? new ApiError(0, { title: 'Sign-in failed', detail: String(signIn.error) }) : null;
  return <SignInScreen busy={signIn.isPending} error={error} onSubmit={(email, password) => signIn.mutate({ email, password })} />;
}
