import React from 'react';
import { useRouter } from 'expo-router';
import { AccountScreen } from '../../components/account-screen';
import { useBreakpoints } from '../../components/breakpoints';
import { ApiError } from '../../hooks/api';
import { useMe, useSignOutEverywhere } from '../../hooks/session';
import { useChangePassword, useConfirmSecondFactor, useRename, useStartSecondFactor, useTurnOffSecondFactor } from '../../hooks/account';

const asApiError = (e: unknown) => (e instanceof ApiError ? e : null);

export default function Account() {
  const { wide } = useBreakpoints();
  const me = useMe();
  const router = useRouter();
  const rename = useRename();
  const password = useChangePassword();
  const start = useStartSecondFactor();
  const confirm = useConfirmSecondFactor();
  const turnOff = useTurnOffSecondFactor();
  const everywhere = useSignOutEverywhere();
  // Recovery codes live only in this screen's memory, shown once.
  const [codes, setCodes] = React.useState<string[] | null>(null);
  if (!me.data) return null;
  return (
    <AccountScreen
      me={me.data}
      wide={wide}
      rename={{ run: (name) => rename.mutate({ name }), busy: rename.isPending, error: asApiError(rename.error), saved: rename.isSuccess }}
      changePassword={{
        run: (currentPassword, newPassword) => password.mutate({ currentPassword, newPassword }),
        busy: password.isPending,
        error: asApiError(password.error),
        changed: password.isSuccess,
      }}
      secondFactor={{
        setup: codes ? null : (start.data ?? null),
        start: { run: () => start.mutate(), busy: start.isPending, error: asApiError(start.error) },
        confirm: {
          run: (code) =>
            confirm.mutate(
              { code },
              {
                onSuccess: (answer) => {
                  setCodes(answer.recoveryCodes);
                  start.reset();
                },
              },
            ),
          busy: confirm.isPending,
          error: asApiError(confirm.error),
        },
        recoveryCodes: codes,
        onRecoveryCodesStored: () => {
          setCodes(null);
          confirm.reset();
        },
        turnOff: { run: (pw) => turnOff.mutate({ password: pw }), busy: turnOff.isPending, error: asApiError(turnOff.error) },
      }}
      signOutEverywhere={{ run: () => everywhere.mutate(undefined, { onSettled: () => router.replace('/sign-in') }), busy: everywhere.isPending, error: asApiError(everywhere.error) }}
    />
  );
}
