// Register loggers, then show their labels and bench sheet once (leaving asks first).
import React from 'react';
import { useRouter } from 'expo-router';
import { RegisterScreen } from '../../../components/register-screen';
import { TokenSheet, type SheetToken } from '../../../components/label-sheet';
import { ConfirmDialog } from '../../../components/confirm';
import { Page } from '../../../components/shell';
import { consoleOrigin, useLeaveGuard } from '../../../components/web';
import { useModels } from '../../../hooks/models';
import { useRegisterBatch, useRegisterLogger } from '../../../hooks/loggers';

export default function Register() {
  const router = useRouter();
  const models = useModels();
  const single = useRegisterLogger();
  const [progress, setProgress] = React.useState(0);
  const batch = useRegisterBatch(setProgress);
  const [issued, setIssued] = React.useState<SheetToken[] | null>(null);
  const [asking, setAsking] = React.useState(false);
  const guard = useLeaveGuard(Boolean(issued), (href) => router.push(href as never));

  if (issued) {
    const leave = () => {
      setIssued(null);
      router.push('/loggers');
    };
    return (
      <Page title="Labels and bench sheet" subtitle={`${issued.length} ${issued.length === 1 ? 'logger' : 'loggers'} registered`}>
        <TokenSheet tokens={issued} origin={consoleOrigin()} title="Labels" onDone={() => setAsking(true)} />
        <ConfirmDialog
          visible={asking || guard.held !== null}
          title="Leave the labels?"
          detail="The tokens cannot be shown again. Leave only after the labels are printed and the bench sheet is saved; otherwise each logger's token has to be rotated."
          confirmLabel="Leave"
          danger
          onCancel={() => {
            setAsking(false);
            guard.stay();
          }}
          onConfirm={() => {
            if (guard.held) {
              setIssued(null);
              guard.leave();
            } else {
              setAsking(false);
              leave();
            }
          }}
        />
      </Page>
    );
  }

  return (
    <RegisterScreen
      models={{ rows: models.data?.rows ?? [], loading: models.isPending, error: models.error }}
      single={{
        busy: single.isPending,
        error: single.error,
        run: (input) =>
          single.mutate(input, {
            onSuccess: (r) => setIssued([{ id: r.id, serial: r.serial, token: r.token, modelName: r.modelName, board: r.board, channel: r.channel }]),
          }),
      }}
      batch={{
        busy: batch.isPending,
        error: batch.error,
        progress,
        run: (file) => {
          setProgress(0);
          batch.mutate(file, { onSuccess: (r) => setIssued(r.rows.map((row) => ({ ...row }))) });
        },
      }}
    />
  );
}
