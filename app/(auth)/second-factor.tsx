// Production asks admins and release engineers for a second factor before anything else: this screen,
// outside the console's shell, is where the console sends them until it is on.
import React from 'react';
import { Redirect, useRouter } from 'expo-router';
import { Text } from 'react-native';
import { AuthFrame } from '../../components/auth-frame';
import { RecoveryCodes, SecondFactorSetupPanel } from '../../components/second-factor-setup';
import { Button, Skeleton } from '../../components/ui';
import { type } from '../../components/theme';
import { roleNames } from '../../schemas/auth';
import { useConfirmSecondFactor, useStartSecondFactor } from '../../hooks/account';
import { useMe, useSignOut } from '../../hooks/session';
import { ApiError } from '../../hooks/api';

export default function SecondFactorFirst() {
  const me = useMe();
  const start = useStartSecondFactor();
  const confirm = useConfirmSecondFactor();
  const signOut = useSignOut();
  const router = useRouter();
  const codes = confirm.data?.recoveryCodes ?? null;
  if (me.isPending) {
    return (
      <AuthFrame title="Set up a second factor">
        <Skeleton rows={3} />
      </AuthFrame>
    );
  }
  if (!me.data) return <Redirect href="/sign-in" />;
  if (!me.data.secondFactor.setupNeeded && !codes) return <Redirect href="/" />;
  return (
    <AuthFrame
      wide
      title="Set up a second factor"
      intro={`${me.data.name}, your role (${roleNames[me.data.role].toLowerCase()}) can ship firmware or signing keys to loggers wired to live PV circuits, so a second factor comes first: after your password, Heliodor will also ask for a code from your phone.`}
    >
      {codes ? (
        <RecoveryCodes codes={codes} onDone={() => router.replace('/')} doneLabel="I have stored them: open the console" />
      ) : (
        <SecondFactorSetupPanel
          setup={start.data ?? null}
          onStart={() => start.mutate()}
          starting={start.isPending}
          startError={start.error instanceof ApiError ? start.error : null}
          onConfirm={(code) => confirm.mutate({ code })}
          confirming={confirm.isPending}
          confirmError={confirm.error instanceof ApiError ? confirm.error : null}
        />
      )}
      {codes ? null : (
        <>
          <Text style={type.small}>Not now? Sign out; you will be asked again at your next sign-in.</Text>
          <Button label="Sign out" variant="quiet" onPress={() => signOut.mutate(undefined, { onSettled: () => router.replace('/sign-in') })} />
        </>
      )}
    </AuthFrame>
  );
}
