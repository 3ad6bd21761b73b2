// A model's signing: the rule each release must meet (k of the n registered keys), the trust set its
// loggers follow, and the next version waiting for signatures by keys of the one before, with how to
// sign it offline (`heliodor trust sign`) and where to paste the result. Admins change the rule here;
// admins and release engineers read the sets and add signatures (server/keys/trust-sets.ts).
import React from 'react';
import { Platform, StyleSheet, Text, View } from 'react-native';
import { z } from 'zod';
import { Page } from './shell';
import { Badge, Button, Card, Mono, Notice, Row } from './ui';
import { FormField, decimalText, formSchema, useSchemaForm, useServerErrors, whenValid } from './form';
import { ConfirmDialog, ProblemNotice, type ProblemLike } from './release-controls';
import { QueryView, type QueryState } from './query-state';
import { colors, radii, space, type } from './theme';
import { absoluteTime, relativeTime } from './format';
import { signingThresholdSchema } from '../schemas/models';
import { trustSignatureRequest, type TrustSetVersionView, type TrustSetView, type TrustSignatureRequest } from '../schemas/keys';
import type { Model } from '../hooks/models';

type Action<Input> = { busy: boolean; error: ProblemLike; run: (input: Input, done: () => void) => void };

type Props = {
  model: QueryState<Model>;
  trust: QueryState<TrustSetView>;
  wide: boolean;
  /** Change the model's signing rule (admins: the model's `can.edit`). */
  changeRule: Action<number>;
  /** Add one signature to the pending trust set. */
  sign: Action<TrustSignatureRequest>;
  onBack: () => void;
};

const plural = (n: number, one: string, many = `${one}s`) => `${n} ${n === 1 ? one : many}`;

/** The file name the console suggests for a pending set's canonical text. */
export const trustSetFileName = (version: number) => `trust-set-v${version}.json`;

/** The command that signs the saved text offline; it prints the JSON to paste back. */
export const trustSignCommand = (version: number) => `heliodor trust sign --key <your key>.private.pem ${trustSetFileName(version)}`;

export function ModelSigningScreen({ model, trust, wide, changeRule, sign, onBack }: Props) {
  return (
    <QueryView state={model}>
      {(m) => (
        <Page title={m.name} subtitle="Signing rule, and the trust set its loggers follow" actions={<Button label="All models" variant="secondary" onPress={onBack} testID="back-to-models" />}>
          <QueryView state={trust}>
            {(t) => {
              const keyCount = (t.pending ?? t.current)?.keys.length ?? 0;
              const rule = <RuleCard model={m} trust={t} keyCount={keyCount} changeRule={changeRule} />;
              const current = t.current ? <CurrentCard set={t.current} /> : <Notice tone="slate" title="No trust set yet" detail="Version 1 is written when the first signing key is registered; loggers are made with it." />;
              const pending = t.pending ? <PendingCard set={t.pending} sign={sign} /> : null;
              return wide ? (
                <View style={styles.columns}>
                  <View style={styles.column}>
                    {rule}
                    {current}
                  </View>
                  <View style={styles.column}>{pending ?? <NothingPending />}</View>
                </View>
              ) : (
                <View style={{ gap: space.md }}>
                  {rule}
                  {pending}
                  {current}
                </View>
              );
            }}
          </QueryView>
        </Page>
      )}
    </QueryView>
  );
}

function NothingPending() {
  return (
    <Card testID="trust-nothing-pending">
      <Text role="heading" aria-level={2} style={type.heading}>
        Nothing waits for signatures
      </Text>
      <Text style={type.body}>Registering or revoking a key, or changing the signing rule, proposes the next version of the trust set. It shows here until keys of the current version sign it.</Text>
    </Card>
  );
}

// ─── The signing rule ─────────────────────────────────────────────────────────

function RuleCard({ model, trust, keyCount, changeRule }: { model: Model; trust: TrustSetView; keyCount: number; changeRule: Action<number> }) {
  const [asking, setAsking] = React.useState<number | null>(null);
  const k = model.signingThreshold;
  return (
    <Card testID="signing-rule">
      <Text role="heading" aria-level={2} style={type.heading}>
        Signing rule
      </Text>
      <Row wrap style={{ alignItems: 'baseline' }}>
        <Text style={type.figure} testID="signing-rule-figure">
          {k} of {keyCount}
        </Text>
        <Text style={type.small}>registered keys, not revoked</Text>
      </Row>
      <Text style={type.body}>
        Each release of {model.name} needs signatures by {plural(k, 'distinct key')} before its pilot starts. Loggers check offers against the threshold of the trust set they hold
        {trust.current ? ` (version ${trust.current.version}: ${trust.current.threshold} of ${trust.current.keys.length})` : ''}.
      </Text>
      {model.can.edit ? (
        <RuleForm
          current={k}
          keyCount={keyCount}
          busy={changeRule.busy}
          error={asking === null ? changeRule.error : null}
          onAsk={(next) => setAsking(next)}
          key={k}
        />
      ) : null}
      {asking !== null ? (
        <ConfirmDialog
          visible
          title={`Change the signing rule to ${asking} of ${keyCount}?`}
          confirmLabel="Change rule"
          busy={changeRule.busy}
          error={changeRule.error}
          onCancel={() => setAsking(null)}
          onConfirm={() => changeRule.run(asking, () => setAsking(null))}
          testID="confirm-rule"
        >
          <Text style={type.body}>
            From now on each release of {model.name} needs {plural(asking, 'signature')} by distinct keys before its pilot starts; drafts that have fewer wait for more.
          </Text>
          <Text style={type.body}>
            A new trust set version {trust.current ? trust.current.version + 1 : 1} will need signatures
            {trust.current ? ` by ${plural(trust.current.threshold, 'key')} of version ${trust.current.version}` : ''} before loggers follow it. Until then they keep checking with version{' '}
            {trust.current?.version ?? 1}.
          </Text>
        </ConfirmDialog>
      ) : null}
    </Card>
  );
}

function RuleForm({ current, keyCount, busy, error, onAsk }: { current: number; keyCount: number; busy: boolean; error: ProblemLike; onAsk: (next: number) => void }) {
  const schema = React.useMemo(
    () =>
      formSchema(
        z.object({ signingThreshold: decimalText() }),
        z
          .object({ signingThreshold: signingThresholdSchema })
          .refine((v) => v.signingThreshold <= keyCount, { path: ['signingThreshold'], message: `at most ${keyCount}, the registered keys that are not revoked` })
          .refine((v) => v.signingThreshold !== current, { path: ['signingThreshold'], message: `${current} is the rule already` }),
      ),
    [current, keyCount],
  );
  const form = useSchemaForm(schema, { defaultValues: { signingThreshold: String(current) } });
  useServerErrors(form, error);
  const submit = whenValid(form, ({ signingThreshold }) => onAsk(signingThreshold));
  return (
    <View style={{ gap: space.sm }}>
      <FormField control={form.control} name="signingThreshold" label="Signatures each release needs" inputMode="numeric" hint={`1 to ${keyCount}`} testID="signing-threshold" />
      <Row style={{ justifyContent: 'flex-end' }}>
        <Button label="Change rule" variant="secondary" busy={busy} onPress={submit} testID="change-rule" />
      </Row>
    </View>
  );
}

// ─── The sets ─────────────────────────────────────────────────────────────────

function KeyLine({ name, keyId, children }: { name: string; keyId: string; children?: React.ReactNode }) {
  return (
    <Row wrap style={styles.keyLine}>
      <View style={{ flexGrow: 1, flexShrink: 1, minWidth: 160, gap: 2 }}>
        <Text style={type.dense}>{name || 'Unnamed key'}</Text>
        <Mono style={type.small}>{keyId}</Mono>
      </View>
      {children}
    </Row>
  );
}

function CurrentCard({ set }: { set: TrustSetVersionView }) {
  return (
    <Card testID="trust-current">
      <Row wrap style={{ justifyContent: 'space-between' }}>
        <Text role="heading" aria-level={2} style={type.heading}>
          Loggers follow version {set.version}
        </Text>
        <Badge label={`${set.threshold} of ${set.keys.length}`} tone="moss" />
      </Row>
      <Text style={type.small}>
        {set.signedAt ? (
          <>
            In force since <Text aria-label={absoluteTime(set.signedAt)}>{relativeTime(set.signedAt)}</Text> ·{' '}
          </>
        ) : null}
        expires {absoluteTime(set.expires)}
      </Text>
      <View>
        {set.keys.map((k) => (
          <KeyLine key={k.keyId} name={k.name} keyId={k.keyId} />
        ))}
      </View>
    </Card>
  );
}

function PendingCard({ set, sign }: { set: TrustSetVersionView; sign: Action<TrustSignatureRequest> }) {
  const previous = set.version - 1;
  const still = Math.max(0, set.needs - set.signedBy.length);
  const [copied, setCopied] = React.useState<'copied' | 'failed' | null>(null);
  const copy = async () => {
    try {
      if (Platform.OS !== 'web' || !navigator.clipboard) throw new Error('no clipboard');
      await navigator.clipboard.writeText(set.canonical);
      setCopied('copied');
    } catch {
      setCopied('failed');
    }
  };
  return (
    <Card testID="trust-pending" style={{ borderLeftWidth: 4, borderLeftColor: colors.amber }}>
      <Row wrap style={{ justifyContent: 'space-between' }}>
        <Text role="heading" aria-level={2} style={type.heading}>
          Version {set.version} waits for signatures
        </Text>
        <Badge label={`${set.signedBy.length} of ${set.needs} signed`} tone="amber" testID="trust-pending-count" />
      </Row>
      <Text style={type.body}>
        It lists {plural(set.keys.length, 'key')}, {set.threshold} of them per release. Loggers take it once {plural(set.needs, 'key')} of version {previous} signed it
        {still > 0 ? `: ${still} more needed.` : '.'}
      </Text>
      <View testID="trust-signers">
        {set.signedBy.map((k) => (
          <KeyLine key={k.keyId} name={k.name} keyId={k.keyId}>
            <Badge label="Signed" tone="moss" />
          </KeyLine>
        ))}
        {set.missing.map((k) => (
          <KeyLine key={k.keyId} name={k.name} keyId={k.keyId}>
            <Badge label="Not yet" tone="slate" />
          </KeyLine>
        ))}
      </View>
      <Notice tone="amber" title="Sign only a change you expected" detail="A trust set tells every logger of this model which keys to believe. Compare the keys it lists with the ones your team registered." />

      <Text style={type.label}>1 · Save the text it signs as {trustSetFileName(set.version)}, exactly (no final newline)</Text>
      <View style={styles.codeBox}>
        <Text selectable style={[type.mono, { fontSize: 12, lineHeight: 17 }]} testID="trust-canonical">
          {set.canonical}
        </Text>
      </View>
      <Row wrap>
        {Platform.OS === 'web' ? <Button label="Copy text" variant="secondary" onPress={() => void copy()} testID="copy-canonical" /> : null}
        {copied === 'copied' ? <Text style={type.small}>Copied.</Text> : copied === 'failed' ? <Text style={type.small}>Could not copy: select the text instead.</Text> : null}
      </Row>
      <Text style={type.label}>2 · Sign it offline with your key of version {previous}</Text>
      <View style={styles.codeBox}>
        <Text selectable style={[type.mono, { fontSize: 12, lineHeight: 17 }]} testID="trust-sign-command">
          {trustSignCommand(set.version)}
        </Text>
      </View>
      <Text style={type.label}>3 · Paste what it printed</Text>
      <SignatureForm version={set.version} sign={sign} />
    </Card>
  );
}

/**
 * The output of `heliodor trust sign`: one JSON object that the shared request schema checks
 * (schemas/keys.ts trustSignatureRequest); its rule's messages name the part that is wrong.
 */
function signatureOutput(version: number) {
  return z.object({
    output: z
      .string()
      .trim()
      .min(1, 'paste the output of heliodor trust sign')
      .transform((text, ctx): TrustSignatureRequest => {
        let json: unknown;
        try {
          json = JSON.parse(text);
        } catch {
          ctx.addIssue({ code: 'custom', message: 'is not the output of heliodor trust sign (one line of JSON)' });
          return z.NEVER;
        }
        const parsed = trustSignatureRequest.safeParse(json);
        if (!parsed.success) {
          const issue = parsed.error.issues[0];
          ctx.addIssue({ code: 'custom', message: `${issue.path.join('.') || 'the output'}: ${issue.message}` });
          return z.NEVER;
        }
        if (parsed.data.version !== version) {
          ctx.addIssue({ code: 'custom', message: `signs version ${parsed.data.version}; the set waiting is version ${version}: sign its text again` });
          return z.NEVER;
        }
        return parsed.data;
      }),
  });
}

function SignatureForm({ version, sign }: { version: number; sign: Action<TrustSignatureRequest> }) {
  const schema = React.useMemo(() => signatureOutput(version), [version]);
  const form = useSchemaForm(schema, { defaultValues: { output: '' } });
  const submit = whenValid(form, ({ output }) => sign.run(output, () => form.reset()));
  return (
    <View style={{ gap: space.sm }}>
      <FormField
        control={form.control}
        name="output"
        label="Signature (JSON)"
        mono
        multiline
        autoCapitalize="none"
        autoCorrect={false}
        placeholder={'{"version":…,"keyId":"…","algorithm":"…","signature":"…"}'}
        style={{ minHeight: 88, paddingVertical: space.sm, fontSize: 13 }}
        testID="trust-signature"
      />
      <ProblemNotice error={sign.error} />
      <Row style={{ justifyContent: 'flex-end' }}>
        <Button label="Add signature" busy={sign.busy} onPress={submit} testID="add-trust-signature" />
      </Row>
    </View>
  );
}

const styles = StyleSheet.create({
  columns: { flexDirection: 'row', gap: space.lg, alignItems: 'flex-start' },
  column: { flex: 1, minWidth: 0, gap: space.md },
  keyLine: { justifyContent: 'space-between', alignItems: 'center', paddingVertical: space.sm, borderTopWidth: 1, borderTopColor: colors.line },
  codeBox: { backgroundColor: colors.paper, borderRadius: radii.md, borderWidth: 1, borderColor: colors.line, padding: space.sm },
});
