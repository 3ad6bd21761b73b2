import React from 'react';
import { ModelsScreen } from '../../../components/models-screen';
import { useCreateModel, useModels, useUpdateModel } from '../../../hooks/models';
import { useMe } from '../../../hooks/session';

export default function Models() {
  const me = useMe();
  const models = useModels();
  const create = useCreateModel();
  const update = useUpdateModel();
  return (
    <ModelsScreen
      state={models}
      canCreate={me.data?.can.createModel ?? false}
      create={{ busy: create.isPending, error: create.error, run: (input, done) => create.mutate(input, { onSuccess: done }) }}
      update={(id) => ({
        busy: update.isPending && update.variables?.id === id,
        error: update.variables?.id === id ? update.error : null,
        run: (body, done) => update.mutate({ id, body }, { onSuccess: done }),
      })}
    />
  );
}
