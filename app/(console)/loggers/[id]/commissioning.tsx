// A logger's commissioning sheet: one page to print or save, from the logger and its first-readings check.
import React from 'react';
import { useLocalSearchParams } from 'expo-router';
import { CommissioningSheet } from '../../../../components/commissioning';
import { QueryView } from '../../../../components/query-state';
import { useBreakpoints } from '../../../../components/breakpoints';
import { photoUrl, useCommissioning, useLogger } from '../../../../hooks/loggers';
import { useModel } from '../../../../hooks/models';

export default function CommissioningSheetPage() {
  const { id } = useLocalSearchParams<{ id: string }>();
  const logger = useLogger(id);
  const commissioning = useCommissioning(id);
  const model = useModel(logger.data?.modelId);
  const { wide } = useBreakpoints();
  return (
    <QueryView state={logger} rows={6}>
      {(detail) => (
        <QueryView state={commissioning} rows={4}>
          {(view) => <CommissioningSheet logger={detail} view={view} limits={model.data} photoUrl={photoUrl(id)} wide={wide} />}
        </QueryView>
      )}
    </QueryView>
  );
}
