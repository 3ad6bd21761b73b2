// New release: upload a signed image (image + manifest + signature) with a progress bar, see what
// the checks found, then set the draft's targeting and start the pilot.
import React from 'react';
import { Text, View } from 'react-native';
import { useController, type Control } from 'react-hook-form';
import { z } from 'zod';
import { Page } from './shell';
import { Badge, Button, Card, Field, Mono, Notice, ProgressBar, Row } from './ui';
import { FormField, useFieldMessage, useSchemaForm, useServerErrors, whenValid } from './form';
import { ProblemNotice, Segmented, type ProblemLike } from './release-controls';
import { FilePicker, type PickedFile } from './release-file-picker';
import { StateBadge, ChannelBadge, bytes } from './release-badges';
import { colors, fonts, space, type } from './theme';
import type { Release, ReleaseUpload, Channel, UploadPart } from '../hooks/releases';
import { notesSchema, uploadFields } from '../schemas/releases';
import { CHANNELS } from '../schemas/words';

type Problem = (ProblemLike & { status?: number; field?: (path: string) => string | undefined }) | null;

type Props = {
  onUpload: (body: ReleaseUpload) => void;
  uploading: boolean;
  /** 0–1 while uploading; 1 once the bytes are sent (the server then checks them). */
  progress: number | null;
  uploadError: Problem;
  created: Release | null;
  /** The draft's targeting form, rendered once the upload was accepted. */
  targeting?: React.ReactNode;
  onCancel: () => void;
};

type Mode = 'file' | 'text';
type UploadFields = z.input<typeof uploadForm>;

const uploadFieldNames: Record<string, string> = {
  image: 'Image',
  manifest: 'Manifest',
  signature: 'Signature',
  notes: 'Notes',
  channel: 'Channel',
  'manifest.version': 'Manifest version',
  'manifest.model': 'Manifest model',
  'manifest.board_revisions': 'Manifest board revisions',
  'manifest.security_counter': 'Manifest security counter',
  'manifest.image_sha256': 'Manifest image SHA-256',
  'manifest.image_size': 'Manifest image size',
  'manifest.issued_at': 'Manifest issue time',
};

/** What to do next for each refused part, in the engineer's words. */
const nextStep: Record<string, string> = {
  image: 'Check that you chose the image the manifest was made for; if it was rebuilt, re-export the image and sign again.',
  manifest: 'Make the manifest with `heliodor manifest` (canonical JSON) and sign it again.',
  'manifest.version': 'Choose a version this model has not had yet (releases are one per model and version), make the manifest again and sign it.',
  'manifest.security_counter': 'Use a security counter at least as high as the model’s published releases, make the manifest again and sign it.',
  'manifest.board_revisions': 'Name only board revisions registered for the model (see Models), make the manifest again and sign it.',
  'manifest.model': 'Use the model id shown under Models, make the manifest again and sign it.',
  signature: 'Sign the manifest again with a key registered under Signing keys and still active.',
};

/** The advice for a refused field: its own, else its part's (image, manifest, signature). */
const adviceFor = (path: string) => nextStep[path] ?? nextStep[path.split('.')[0]];

const filePart = (f: PickedFile): UploadPart & { kind: 'file' } => ({ kind: 'file', name: f.name, blob: f.blob, uri: f.uri, mimeType: f.mimeType });

const picked = z.custom<PickedFile>().nullable();
/** A signed part (manifest, signature) given as a file or pasted as text. */
const signedPart = z.object({ mode: z.enum(['file', 'text']), file: picked, text: z.string() });
const given = (part: z.infer<typeof signedPart>) => (part.mode === 'file' ? part.file !== null : part.text.trim() !== '');

/**
 * The upload's text fields (notes, channel) from their shared schema, with the three signed parts
 * the form checks are there (the server checks what they say) and "from the version" for the channel.
 */
const uploadForm = uploadFields
  .extend({ image: picked, manifest: signedPart, signature: signedPart, notes: notesSchema, channel: z.enum(['auto', ...CHANNELS]) })
  .superRefine(({ image, manifest, signature }, ctx) => {
    if (!image) ctx.addIssue({ code: 'custom', path: ['image'], message: 'Choose the image file.' });
    if (!given(manifest)) ctx.addIssue({ code: 'custom', path: ['manifest'], message: manifest.mode === 'file' ? 'Choose manifest.json.' : 'Paste the manifest.' });
    if (!given(signature)) ctx.addIssue({ code: 'custom', path: ['signature'], message: signature.mode === 'file' ? 'Choose the signature file.' : 'Paste the signature (base64).' });
  })
  .transform(
    ({ image, manifest, signature, notes, channel }): ReleaseUpload => ({
      image: filePart(image!),
      // Pasted manifests are sent exactly as pasted: the signature covers those bytes.
      manifest: manifest.mode === 'file' ? filePart(manifest.file!) : { kind: 'text', text: manifest.text },
      signature: signature.mode === 'file' ? filePart(signature.file!) : { kind: 'text', text: signature.text.trim() },
      notes,
      channel: channel === 'auto' ? undefined : channel,
    }),
  );

export function ReleaseNewScreen({ onUpload, uploading, progress, uploadError, created, targeting, onCancel }: Props) {
  const form = useSchemaForm(uploadForm, {
    defaultValues: {
      image: null,
      manifest: { mode: 'file', file: null, text: '' },
      signature: { mode: 'file', file: null, text: '' },
      notes: '',
      channel: 'auto',
    },
  });
  const { control } = form;
  // A refusal of manifest.version and the like is shown under the manifest picker too.
  useServerErrors(form, uploadError, { labels: uploadFieldNames });
  const image = useController({ control, name: 'image' }).field;
  const imageError = useFieldMessage(control, 'image');
  const channel = useController({ control, name: 'channel' }).field;
  const advice = [...new Set((uploadError?.fieldErrors ?? []).map((e) => adviceFor(e.path)).filter(Boolean))];

  return (
    <Page title="New release" subtitle="Upload an image signed offline; it becomes a draft that nobody is offered yet">
      {!created ? (
        <>
          <Card>
            <Text role="heading" aria-level={2} style={type.heading}>
              Signed image
            </Text>
            <FilePicker label="Image" hint="The firmware image the manifest describes." value={image.value as PickedFile | null} onChange={image.onChange} error={imageError} testID="file-image" />
            <FileOrText
              control={control}
              name="manifest"
              label="Manifest"
              file={{ label: 'manifest.json', accept: '.json,application/json', hint: 'Canonical JSON made by `heliodor manifest`.', testID: 'file-manifest' }}
              text={{ label: 'Manifest (canonical JSON, exactly as signed)', multiline: true, testID: 'text-manifest' }}
            />
            <FileOrText
              control={control}
              name="signature"
              label="Signature"
              file={{ label: 'Signature', accept: '.sig,.txt,text/plain', hint: 'The base64 signature from `heliodor sign`.', testID: 'file-signature' }}
              text={{ label: 'Signature (base64)', testID: 'text-signature' }}
            />
          </Card>
          <Card>
            <FormField control={control} name="notes" label="Release notes (Markdown, optional)" multiline style={{ minHeight: 96, paddingVertical: space.sm, textAlignVertical: 'top' }} testID="notes" />
            <Segmented<Channel | 'auto'>
              label="Channel"
              value={channel.value as Channel | 'auto'}
              onChange={channel.onChange}
              options={[
                { value: 'auto', label: 'From the version' },
                { value: 'stable', label: 'Stable' },
                { value: 'early', label: 'Early' },
              ]}
            />
            <Text style={type.small}>From the version: pre-release versions such as 2.5.0-rc.1 go to the early channel, others to stable.</Text>
          </Card>
        </>
      ) : null}

      {progress !== null ? (
        <Card testID="upload-progress">
          <ProgressBar
            value={progress * 100}
            tone={uploadError ? 'ember' : 'moss'}
            label={
              uploadError
                ? `Upload refused after ${Math.round(progress * 100)} %`
                : created
                  ? 'Uploaded 100 % · checks passed'
                  : progress >= 1
                    ? 'Uploaded 100 % · checking the signature and image…'
                    : `Uploading ${Math.round(progress * 100)} %`
            }
          />
        </Card>
      ) : null}

      {uploadError ? (
        <View style={{ gap: space.sm }} testID="upload-refused">
          <ProblemNotice error={uploadError} fieldNames={uploadFieldNames} />
          {advice.map((a) => (
            <Text key={a} style={type.small}>
              {a}
            </Text>
          ))}
          <Text style={type.small}>Nothing was stored. Fix the part named above and upload again.</Text>
        </View>
      ) : null}

      {!created ? (
        <Row wrap style={{ justifyContent: 'flex-end' }}>
          <Button label="Cancel" variant="secondary" onPress={onCancel} />
          <Button label="Upload and check" busy={uploading} onPress={whenValid(form, onUpload)} testID="upload" />
        </Row>
      ) : (
        <>
          <CheckSummary release={created} />
          {targeting}
        </>
      )}
    </Page>
  );
}

/** What the server's checks found, from the accepted upload's reply. */
function CheckSummary({ release }: { release: Release }) {
  const lines: [string, React.ReactNode][] = [
    ['Signature', release.key ? <Text style={type.body}>verified with {release.key.name} (<Text style={{ fontFamily: fonts.mono }}>{release.key.keyId}</Text>)</Text> : 'verified'],
    ['Image', <Text style={type.body}><Mono style={{ wordBreak: 'break-all' } as object}>{release.image.sha256}</Mono> · {bytes(release.image.size)} — matches the manifest</Text>],
    ['Model', release.modelName],
    ['Version', <Text style={type.body}><Mono>{release.version}</Mono> — new for this model</Text>],
    ['Security counter', String(release.securityCounter)],
    ['Board revisions in the manifest', release.manifestBoards.join(', ')],
  ];
  return (
    <Card testID="check-summary">
      <Row wrap style={{ justifyContent: 'space-between' }}>
        <Text role="heading" aria-level={2} style={type.heading}>
          Checks passed: draft {release.version} created
        </Text>
        <Row>
          <StateBadge state={release.state} testID="created-state" />
          <ChannelBadge channel={release.channel} />
        </Row>
      </Row>
      {lines.map(([k, v]) => (
        <View key={k} style={{ flexDirection: 'row', gap: space.sm, alignItems: 'flex-start' }}>
          <Badge label="OK" tone="moss" />
          <View style={{ flex: 1, minWidth: 0, flexDirection: 'row', flexWrap: 'wrap', columnGap: space.md }}>
            <Text style={[type.label, { width: 200, paddingTop: 2 }]}>{k}</Text>
            <View style={{ flex: 1, minWidth: 200 }}>{typeof v === 'string' ? <Text style={type.body}>{v}</Text> : v}</View>
          </View>
        </View>
      ))}
      {release.key?.state === 'retired' ? <Notice tone="amber" title="Signed with a retired key" detail="Retired keys sign nothing new; register and use an active key." /> : null}
      <Text style={[type.small, { color: colors.inkSoft }]}>Nobody is offered a draft. Set who gets it below, then start the pilot.</Text>
    </Card>
  );
}

/** A signed part given either as a file or pasted as text (manifest, signature), with the choice above it. */
function FileOrText({ control, name, label, file, text }: {
  control: Control<UploadFields, unknown, ReleaseUpload>;
  name: 'manifest' | 'signature';
  label: string;
  file: { label: string; accept: string; hint: string; testID: string };
  text: { label: string; multiline?: boolean; testID: string };
}) {
  const mode = useController({ control, name: `${name}.mode` }).field;
  const picked = useController({ control, name: `${name}.file` }).field;
  const typed = useController({ control, name: `${name}.text` }).field;
  const error = useFieldMessage(control, name);
  return (
    <>
      <Segmented<Mode>
        label={label}
        value={mode.value}
        onChange={mode.onChange}
        options={[
          { value: 'file', label: 'Choose file' },
          { value: 'text', label: 'Paste text' },
        ]}
      />
      {mode.value === 'file' ? (
        <FilePicker {...file} value={picked.value} onChange={picked.onChange} error={error} />
      ) : (
        <Field
          label={text.label}
          mono
          multiline={text.multiline}
          value={typed.value}
          onChangeText={typed.onChange}
          onBlur={typed.onBlur}
          error={error}
          style={text.multiline ? { minHeight: 96, paddingVertical: space.sm } : undefined}
          autoCapitalize="none"
          autoCorrect={false}
          testID={text.testID}
        />
      )}
    </>
  );
}
