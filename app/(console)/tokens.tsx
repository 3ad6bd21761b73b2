import React from 'react';
import { TokenScreen } from '../../components/token-screen';
import { useBreakpoints } from '../../components/breakpoints';
import { ApiError } from '../../hooks/api';
import { useCreateToken, useRevokeToken, useTokens, type ApiToken, type NewToken } from '../../hooks/tokens';

export default function Tokens() {
  const { wide } = useBreakpoints();
  const tokens = useTokens();
  const create = useCreateToken();
  const revoke = useRevokeToken();
  // The token text lives only in this screen's memory, never in the query cache.
  const [created, setCreated] = React.useState<NewToken | null>(null);
  const [revoking, setRevoking] = React.useState<ApiToken | null>(null);
  return (
    <TokenScreen
      state={tokens}
      wide={wide}
      onCreate={(body, done) =>
        create.mutate(body, {
          onSuccess: (t) => {
            setCreated(t);
            done();
          },
        })
      }
      creating={create.isPending}
      createError={create.error as ApiError | null}
      created={created}
      onDismissCreated={() => setCreated(null)}
      revoking={revoking}
      onRevoking={(t) => {
        revoke.reset();
        setRevoking(t);
      }}
      onRevoke={(t) => revoke.mutate(t.id, { onSuccess: () => setRevoking(null) })}
      revokeBusy={revoke.isPending}
      revokeError={revoke.error as ApiError | null}
    />
  );
}
