// Registering loggers: one at a time or a CSV batch with an upload progress bar; afterwards the
// labels and bench sheet, shown once.
import React from 'react';
import { Text, View } from 'react-native';
import { z } from 'zod';
import { Page } from './shell';
import { Button, Card, Mono, Notice, ProgressBar, Row, Skeleton } from './ui';
import { FormChoices, FormField, formSchema, useSchemaForm, useServerErrors, whenValid } from './form';
import { Choices } from './choice';
import { colors, space, type } from './theme';
import { pickFile } from './web';
import type { ApiError } from '../hooks/api';
import type { Model } from '../hooks/models';
import type { RegisterInput } from '../hooks/loggers';
import { channel, registerLoggerRequest } from '../schemas/loggers';

type Props = {
  models: { rows: Model[]; loading: boolean; error: unknown };
  single: { busy: boolean; error: unknown; run: (input: RegisterInput) => void };
  batch: { busy: boolean; error: unknown; progress: number; run: (file: File) => void };
};

const asApi = (e: unknown) => e as (ApiError & Error) | null;

export function RegisterScreen({ models, single, batch }: Props) {
  const [mode, setMode] = React.useState<'one' | 'batch'>('one');
  return (
    <Page title="Register loggers" subtitle="Each logger gets a token and a QR label for enrollment on site">
      <Choices
        choices={[
          { value: 'one', label: 'One logger' },
          { value: 'batch', label: 'CSV batch' },
        ]}
        value={mode}
        onChange={setMode}
        testID="register-mode"
      />
      {mode === 'one' ? <SingleForm models={models} single={single} /> : <BatchForm batch={batch} models={models.rows} />}
    </Page>
  );
}

function SingleForm({ models, single }: Pick<Props, 'models' | 'single'>) {
  if (models.loading) return <Skeleton rows={4} height={44} />;
  if (models.error) return <Notice title={asApi(models.error)?.title ?? 'Could not load the models'} detail={asApi(models.error)?.detail} />;
  if (!models.rows.length) return <Notice title="No models yet" detail="An admin adds the model and its board revisions first (More → Models)." tone="amber" />;
  return <SingleFields models={models.rows} single={single} />;
}

/** What the form holds: the registration request, with nothing chosen yet where a choice is needed. */
const registerForm = formSchema(z.object({ serial: z.string(), modelId: z.string().optional(), board: z.string().optional(), channel }), registerLoggerRequest);

function SingleFields({ models, single }: { models: Model[]; single: Props['single'] }) {
  // The board must be one the chosen model lists; the shared rule only knows it is a label.
  const schema = React.useMemo(
    () =>
      registerForm.superRefine((input, ctx) => {
        const model = models.find((m) => m.id === input.modelId);
        if (model && !model.boards.some((b) => b.label === input.board)) ctx.addIssue({ code: 'custom', path: ['board'], message: 'choose the board revision' });
      }),
    [models],
  );
  const form = useSchemaForm(schema, {
    defaultValues: { serial: '', modelId: models.length === 1 ? models[0].id : undefined, board: undefined, channel: 'stable' },
    missing: { modelId: 'choose a model', board: 'choose the board revision' },
  });
  const { control } = form;
  const error = asApi(single.error);
  useServerErrors(form, error);
  const model = models.find((m) => m.id === form.watch('modelId'));

  return (
    <Card>
      <FormField control={control} name="serial" label="Serial" mono autoCapitalize="characters" autoCorrect={false} placeholder="FL2-00121" testID="serial" />
      <FormChoices
        control={control}
        name="modelId"
        label="Model"
        choices={models.map((m) => ({ value: m.id, label: m.name }))}
        onChange={() => form.setValue('board', undefined)}
      />
      {model ? (
        <FormChoices control={control} name="board" label="Board revision" choices={model.boards.map((b) => ({ value: b.label, label: b.label, hint: b.note }))} testID="board" />
      ) : null}
      <FormChoices
        control={control}
        name="channel"
        label="Channel"
        choices={[
          { value: 'stable', label: 'Stable', hint: 'tested releases' },
          { value: 'early', label: 'Early', hint: 'gets releases first' },
        ]}
      />
      {error && !error.fieldErrors?.length ? <Notice title={error.title} detail={error.detail} /> : null}
      <View style={{ alignSelf: 'flex-start' }}>
        <Button label="Register logger" onPress={whenValid(form, single.run)} busy={single.busy} testID="register-one" />
      </View>
    </Card>
  );
}

function BatchForm({ batch, models }: { batch: Props['batch']; models: Model[] }) {
  const [file, setFile] = React.useState<File | null>(null);
  const error = asApi(batch.error);
  const lineErrors = (error?.fieldErrors ?? []).filter((e) => e.line !== undefined || e.path);
  const pct = Math.round(batch.progress * 100);
  const choose = async () => {
    const f = await pickFile('.csv,text/csv');
    if (f) setFile(f);
  };
  return (
    <Card>
      <Text style={type.heading}>Upload a CSV file</Text>
      <Text style={type.body}>
        A header row, then one logger per line. Columns: <Mono>serial,model,board</Mono> and optionally <Mono>channel</Mono> (stable or early; blank means
        stable). Up to 5 000 loggers per file; the file is checked whole and nothing is stored if any line has a problem.
      </Text>
      <View style={{ backgroundColor: colors.paperDeep, padding: space.md, borderRadius: 6 }}>
        <Mono>{`serial,model,board,channel\nFL2-00121,${models[0]?.name ?? 'FL-2 field logger'},B,stable\nFL2-00122,${models[0]?.name ?? 'FL-2 field logger'},C,early`}</Mono>
      </View>
      <Row wrap gap={space.sm}>
        <Button label={file ? 'Choose another file' : 'Choose CSV file'} variant="secondary" onPress={choose} disabled={batch.busy} testID="choose-csv" />
        {file ? (
          <Text style={type.body} testID="csv-name">
            {file.name} · {file.size < 1024 ? `${file.size} bytes` : `${(file.size / 1024).toFixed(1)} KB`}
          </Text>
        ) : null}
      </Row>
      {batch.busy ? (
        <View testID="upload-progress">
          <ProgressBar value={pct} label={pct < 100 ? `Uploading ${file?.name ?? 'the file'}: ${pct} %` : `Uploaded 100 %; checking every line…`} />
        </View>
      ) : null}
      {error ? (
        <Notice title={error.title} detail={error.detail}>
          {lineErrors.slice(0, 50).map((e, i) => (
            <Text key={i} style={type.body} testID="batch-error">
              {e.line !== undefined ? `Line ${e.line}` : 'File'}
              {e.path && !e.path.startsWith('(') ? ` (${e.path})` : ''}: {e.message}
            </Text>
          ))}
          {lineErrors.length > 50 ? <Text style={type.small}>…and {lineErrors.length - 50} more problems.</Text> : null}
          <Text style={type.small}>Nothing was stored. Fix the file and upload it again.</Text>
        </Notice>
      ) : null}
      <View style={{ alignSelf: 'flex-start' }}>
        <Button label="Upload and register" onPress={() => file && batch.run(file)} disabled={!file} busy={batch.busy} testID="upload-csv" />
      </View>
    </Card>
  );
}
