// A logger's page; after a token rotation, the new label is shown once (leaving asks first).
import React from 'react';
import { useLocalSearchParams, useRouter } from 'expo-router';
import { LoggerScreen } from '../../../components/logger-screen';
import { TokenSheet, type SheetToken } from '../../../components/label-sheet';
import { ConfirmDialog } from '../../../components/confirm';
import { Page } from '../../../components/shell';
import { consoleOrigin, useLeaveGuard } from '../../../components/web';
import { photoUrl, useLogger, useMoveLogger, useRetireLogger, useRotateToken, useUpdateProfile } from '../../../hooks/loggers';
import { useModel } from '../../../hooks/models';
import { useSites } from '../../../hooks/sites';
import { LoggerFleet } from '../../../components/fleet-logger-panel';

export default function LoggerPage() {
  const { id } = useLocalSearchParams<{ id: string }>();
  const router = useRouter();
  const logger = useLogger(id);
  const rotate = useRotateToken(id);
  const retire = useRetireLogger(id);
  const move = useMoveLogger(id);
  const changeProfile = useUpdateProfile(id);
  const model = useModel(logger.data?.modelId);
  const sites = useSites();
  const [issued, setIssued] = React.useState<SheetToken | null>(null);
  const [asking, setAsking] = React.useState(false);
  const guard = useLeaveGuard(Boolean(issued), (href) => router.push(href as never));

  if (issued) {
    return (
      <Page title={`New label for ${issued.serial}`} subtitle="The previous label no longer works">
        <TokenSheet tokens={[issued]} origin={consoleOrigin()} title="Label" onDone={() => setAsking(true)} />
        <ConfirmDialog
          visible={asking || guard.held !== null}
          title="Leave the new label?"
          detail="This token cannot be shown again. Leave only after the label is printed and the bench sheet row is saved."
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
        run: () => rotate.mutate(undefined, { onSuccess: (r) => setIssued({ serial: r.serial, token: r.token, modelName: r.modelName, board: r.board }) }),
      }}
      retire={{ busy: retire.isPending, error: retire.error, run: (reason) => retire.mutate({ reason: reason || undefined }) }}
      move={{ busy: move.isPending, error: move.error, run: (siteId) => move.mutate({ siteId }), sites: sites.data?.rows ?? [] }}
      profile={{ busy: changeProfile.isPending, error: changeProfile.error, run: (input) => changeProfile.mutate(input), limits: model.data }}
      photoUrl={photoUrl(id)}
      fleet={<LoggerFleet loggerId={id} canNote={logger.data?.can.addNote ?? false} />}
    />
  );
}
