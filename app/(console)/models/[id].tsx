import React from 'react';
import { useLocalSearchParams, useRouter } from 'expo-router';
import { ModelSigningScreen } from '../../../components/model-signing';
import { useBreakpoints } from '../../../components/breakpoints';
import type { ApiError } from '../../../hooks/api';
import { useModel, useSignTrustSet, useTrustSets, useUpdateModel } from '../../../hooks/models';

export default function ModelPage() {
  const { id } = useLocalSearchParams<{ id: string }>();
  const router = useRouter();
  const { wide } = useBreakpoints();
  const model = useModel(id);
  const trust = useTrustSets(id);
  const update = useUpdateModel();
  const sign = useSignTrustSet(id);
  return (
    <ModelSigningScreen
      model={model}
      trust={trust}
      wide={wide}
      changeRule={{
        busy: update.isPending,
        error: update.error as ApiError | null,
        run: (signingThreshold, done) => update.mutate({ id, body: { signingThreshold } }, { onSuccess: done }),
      }}
      sign={{ busy: sign.isPending, error: sign.error as ApiError | null, run: (body, done) => sign.mutate(body, { onSuccess: done }) }}
      onBack={() => router.push('/models' as never)}
    />
  );
}
