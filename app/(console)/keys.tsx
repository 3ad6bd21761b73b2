import React from 'react';
import { KeyScreen, type KeyMove } from '../../components/key-screen';
import { useBreakpoints } from '../../components/breakpoints';
import { ApiError } from '../../hooks/api';
import { useRegisterKey, useRetireKey, useRevokeKey, useSigningKeys } from '../../hooks/keys';
import { useMe } from '../../hooks/session';

export default function Keys() {
  const me = useMe();
  const { wide } = useBreakpoints();
  const keys = useSigningKeys();
  const register = useRegisterKey();
  const retire = useRetireKey();
  const revoke = useRevokeKey();
  const [pending, setPending] = React.useState<KeyMove | null>(null);
  const change = pending?.action === 'revoke' ? revoke : retire;
  return (
    <KeyScreen
      state={keys}
      wide={wide}
      canManage={me.data?.can.registerKey ?? false}
      onRegister={(body, done) => register.mutate(body, { onSuccess: done })}
      registering={register.isPending}
      registerError={register.error as ApiError | null}
      pending={pending}
      onPending={(m) => {
        retire.reset();
        revoke.reset();
        setPending(m);
      }}
      onConfirm={(m) => change.mutate(m.key.id, { onSuccess: () => setPending(null) })}
      changing={change.isPending}
      changeError={change.error as ApiError | null}
    />
  );
}
