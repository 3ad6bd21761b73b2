// A logger's page; after a token rotation, or new labels for its batch, the new labels are shown once
// (leaving asks first).
import React from 'react';
import { useLocalSearchParams, useRouter } from 'expo-router';
import { LoggerScreen } from '../../../components/logger-screen';
import { TokenSheet, type SheetToken } from '../../../components/label-sheet';
import { ConfirmDialog } from '../../../components/confirm';
import { Page } from '../../../components/shell';
import { consoleOrigin, useLeaveGuard } from '../../../components/web';
import {
  photoUrl,
  useCommissioning,
  useIssueBatchLabels,
  useLogger,
  useMoveLogger,
  useRestartCommissioning,
  useRetireLogger,
  useRotateToken,
  useUpdateProfile,
} from '../../../hooks/loggers';
import { CommissioningCard } from '../../../components/commissioning';
import { useModel } from '../../../hooks/models';
import { useSites } from '../../../hooks/sites';
import { LoggerFleet } from '../../../components/fleet-logger-panel';

export default function LoggerPage() {
  const { id } = useLocalSearchParams<{ id: string }>();
  const router = useRouter();
  const logger = useLogger(id);
  const rotate = useRotateToken(id);
  const batchLabels = useIssueBatchLabels();
  const retire = useRetireLogger(id);
  const move = useMoveLogger(id);
  const changeProfile = useUpdateProfile(id);
  const commissioning = useCommissioning(logger.data?.status === 'enrolled' ? id : undefined);
  const restart = useRestartCommissioning(id);
  const model = useModel(logger.data?.modelId);
  const sites = useSites();
  const [issued, setIssued] = React.useState<{ title: string; subtitle: string; tokens: SheetToken[] } | null>(null);
  const [asking, setAsking] = React.useState(false);
  const guard = useLeaveGuard(Boolean(issued), (href) => router.push(href as never));

  if (issued) {
    return (
      <Page title={issued.title} subtitle={issued.subtitle}>
        <TokenSheet tokens={issued.tokens} origin={consoleOrigin()} title={issued.tokens.length === 1 ? 'Label' : 'Labels'} onDone={() => setAsking(true)} />
        <ConfirmDialog
          visible={asking || guard.held !== null}
          title={issued.tokens.length === 1 ? 'Leave the new label?' : 'Leave the new labels?'}
          detail={
            issued.tokens.length === 1
              ? 'This token cannot be shown again. Leave only after the label is printed and the bench sheet row is saved.'
              : 'These tokens cannot be shown again. Leave only after the labels are printed and the bench sheet is saved.'
          }
          confirmLabel="Leave"
          danger
          onCancel={() => {
            setAsking(false);
            guard.stay();
          }}
          onConfirm={() => {
            setAsking(false);
            if (guard.held) guard.leave();
            setIssued(null);
          }}
        />
      </Page>
    );
  }

  return (
    <LoggerScreen
      state={logger}
      rotate={{
        busy: rotate.isPending,
        error: rotate.error,
        run: () =>
          rotate.mutate(undefined, {
            onSuccess: (r) =>
              setIssued({ title: `New label for ${r.serial}`, subtitle: 'The previous label no longer works', tokens: [{ serial: r.serial, token: r.token, modelName: r.modelName, board: r.board }] }),
          }),
      }}
      canIssueBatchLabels={Boolean(logger.data?.can.rotateToken)}
      batchLabels={{
        busy: batchLabels.isPending,
        error: batchLabels.error,
        run: (batchId) =>
          batchLabels.mutate(batchId, {
            onSuccess: (r) =>
              setIssued({
                title: `New labels for the batch ${r.batch.fileName}`,
                subtitle: `${r.total} ${r.total === 1 ? 'logger' : 'loggers'}; the previous labels no longer work${r.skipped.length ? ` (${r.skipped.length} enrolled or retired kept theirs)` : ''}`,
                tokens: r.rows.map((row) => ({ ...row })),
              }),
          }),
      }}
      retire={{ busy: retire.isPending, error: retire.error, run: (reason) => retire.mutate({ reason: reason || undefined }) }}
      move={{ busy: move.isPending, error: move.error, run: (siteId) => move.mutate({ siteId }), sites: sites.data?.rows ?? [] }}
      profile={{ busy: changeProfile.isPending, error: changeProfile.error, run: (input) => changeProfile.mutate(input), limits: model.data }}
      photoUrl={photoUrl(id)}
      commissioning={
        <CommissioningCard loggerId={id} view={commissioning.data} restart={{ busy: restart.isPending, error: restart.error, run: () => restart.mutate() }} />
      }
      fleet={<LoggerFleet loggerId={id} canNote={logger.data?.can.addNote ?? false} timeZone={logger.data?.site?.timeZone} />}
    />
  );
}
