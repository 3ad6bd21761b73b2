// New release: upload a signed image (image + manifest + signature) with a progress bar, see what
// the checks found, then set the draft's targeting and start the pilot.
import React from 'react';
import { Text, View } from 'react-native';
import { Page } from './shell';
import { Badge, Button, Card, Field, Mono, Notice, ProgressBar, Row } from './ui';
import { ProblemNotice, Segmented, type ProblemLike } from './release-controls';
import { FilePicker, type PickedFile } from './release-file-picker';
import { StateBadge, ChannelBadge, bytes } from './release-badges';
import { colors, fonts, space, type } from './theme';
import type { Release, ReleaseUpload, Channel, UploadPart } from '../hooks/releases';

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

export function ReleaseNewScreen({ onUpload, uploading, progress, uploadError, created, targeting, onCancel }: Props) {
  const [image, setImage] = React.useState<PickedFile | null>(null);
  const [manifestMode, setManifestMode] = React.useState<Mode>('file');
  const [manifestFile, setManifestFile] = React.useState<PickedFile | null>(null);
  const [manifestText, setManifestText] = React.useState('');
  const [signatureMode, setSignatureMode] = React.useState<Mode>('file');
  const [signatureFile, setSignatureFile] = React.useState<PickedFile | null>(null);
  const [signatureText, setSignatureText] = React.useState('');
  const [notes, setNotes] = React.useState('');
  const [channel, setChannel] = React.useState<Channel | 'auto'>('auto');
  const [missing, setMissing] = React.useState<Record<string, string>>({});

  const filePart = (f: PickedFile): UploadPart & { kind: 'file' } => ({ kind: 'file', name: f.name, blob: f.blob, uri: f.uri, mimeType: f.mimeType });

  function submit() {
    const m: Record<string, string> = {};
    if (!image) m.image = 'Choose the image file.';
    if (manifestMode === 'file' ? !manifestFile : !manifestText.trim()) m.manifest = manifestMode === 'file' ? 'Choose manifest.json.' : 'Paste the manifest.';
    if (signatureMode === 'file' ? !signatureFile : !signatureText.trim()) m.signature = signatureMode === 'file' ? 'Choose the signature file.' : 'Paste the signature (base64).';
    setMissing(m);
    if (Object.keys(m).length || !image) return;
    onUpload({
      image: filePart(image),
      // Pasted manifests are sent exactly as pasted: the signature covers those bytes.
      manifest: manifestMode === 'file' ? filePart(manifestFile!) : { kind: 'text', text: manifestText },
      signature: signatureMode === 'file' ? filePart(signatureFile!) : { kind: 'text', text: signatureText.trim() },
      notes,
      channel: channel === 'auto' ? undefined : channel,
    });
  }

  // A refusal of manifest.version and the like is shown under the manifest picker too.
  const fieldError = (part: string) =>
    missing[part] ??
    ((uploadError?.fieldErrors ?? [])
      .filter((e) => e.path === part || e.path.startsWith(`${part}.`))
      .map((e) => (e.path === part ? e.message : `${uploadFieldNames[e.path] ?? e.path}: ${e.message}`))
      .join(' ') ||
      undefined);
  const advice = [...new Set((uploadError?.fieldErrors ?? []).map((e) => adviceFor(e.path)).filter(Boolean))];

  return (
    <Page title="New release" subtitle="Upload an image signed offline; it becomes a draft that nobody is offered yet">
      {!created ? (
        <>
          <Card>
            <Text role="heading" aria-level={2} style={type.heading}>
              Signed image
            </Text>
            <FilePicker label="Image" hint="The firmware image the manifest describes." value={image} onChange={setImage} error={fieldError('image')} testID="file-image" />
            <FileOrText
              label="Manifest"
              mode={manifestMode}
              onMode={setManifestMode}
              error={fieldError('manifest')}
              file={<FilePicker label="manifest.json" accept=".json,application/json" hint="Canonical JSON made by `heliodor manifest`." value={manifestFile} onChange={setManifestFile} error={fieldError('manifest')} testID="file-manifest" />}
              text={{ label: 'Manifest (canonical JSON, exactly as signed)', value: manifestText, onChange: setManifestText, multiline: true, testID: 'text-manifest' }}
            />
            <FileOrText
              label="Signature"
              mode={signatureMode}
              onMode={setSignatureMode}
              error={fieldError('signature')}
              file={<FilePicker label="Signature" accept=".sig,.txt,text/plain" hint="The base64 signature from `heliodor sign`." value={signatureFile} onChange={setSignatureFile} error={fieldError('signature')} testID="file-signature" />}
              text={{ label: 'Signature (base64)', value: signatureText, onChange: setSignatureText, testID: 'text-signature' }}
            />
          </Card>
          <Card>
            <Field label="Release notes (Markdown, optional)" multiline value={notes} onChangeText={setNotes} style={{ minHeight: 96, paddingVertical: space.sm, textAlignVertical: 'top' }} testID="notes" />
            <Segmented<Channel | 'auto'>
              label="Channel"
              value={channel}
              onChange={setChannel}
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
          <Button label="Upload and check" busy={uploading} onPress={submit} testID="upload" />
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
function FileOrText({ label, mode, onMode, error, file, text }: {
  label: string;
  mode: Mode;
  onMode: (m: Mode) => void;
  error?: string;
  file: React.ReactNode;
  text: { label: string; value: string; onChange: (v: string) => void; multiline?: boolean; testID: string };
}) {
  return (
    <>
      <Segmented<Mode>
        label={label}
        value={mode}
        onChange={onMode}
        options={[
          { value: 'file', label: 'Choose file' },
          { value: 'text', label: 'Paste text' },
        ]}
      />
      {mode === 'file' ? (
        file
      ) : (
        <Field
          label={text.label}
          mono
          multiline={text.multiline}
          value={text.value}
          onChangeText={text.onChange}
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
