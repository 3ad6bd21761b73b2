import React from 'react';
import { useRouter } from 'expo-router';
import { ModelsScreen } from '../../../components/models-screen';
import { useCreateModel, useModels, useUpdateModel } from '../../../hooks/models';
import { useMe } from '../../../hooks/session';

export default function Models() {
  const me = useMe();
  const models = useModels();
  const create = useCreateModel();
  const update = useUpdateModel();
  const router = useRouter();
  // The people who hold signing keys read trust sets (server/keys/routes.ts).
  const signer = me.data?.role === 'admin' || me.data?.role === 'release_engineer';
  return (
    <ModelsScreen
      state={models}
      canCreate={me.data?.can.createModel ?? false}
      onOpenSigning={signer ? (id) => router.push(`/models/${id}` as never) : undefined}
      create={{ busy: create.isPending, error: create.error, run: (input, done) => create.mutate(input, { onSuccess: done }) }}
      update={(id) => ({
        busy: update.isPending && update.variables?.id === id,
        error: update.variables?.id === id ? update.error : null,
        run: (body, done) => update.mutate({ id, body }, { onSuccess: done }),
      })}
    />
  );
}
