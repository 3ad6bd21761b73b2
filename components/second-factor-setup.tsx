// Setting up a second factor: scan the QR code (or type the secret) into an authenticator app, confirm
// with the code it shows, then store the ten recovery codes, which are shown only this once.
import React from 'react';
import { Image, Platform, StyleSheet, Text, View } from 'react-native';
import { Button, Field, Notice, Row } from './ui';
import { colors, radii, space, type } from './theme';
import { messageFor, sentence, useForm, zodFieldErrors } from './form-state';
import { qrDataUrl } from './qr-art';
import { secondFactorConfirmRequest, type SecondFactorSetup } from '../schemas/auth';
import type { ApiError } from '../hooks/api';

type Props = {
  setup: SecondFactorSetup | null;
  onStart: () => void;
  starting: boolean;
  startError: ApiError | null;
  onConfirm: (code: string) => void;
  confirming: boolean;
  confirmError: ApiError | null;
  /** What the Start button says (a first set-up, or moving to a new phone). */
  startLabel?: string;
};

/** The secret in groups of four, as people type it into an app. */
const grouped = (secret: string) => secret.match(/.{1,4}/g)?.join(' ') ?? secret;

export function SecondFactorSetupPanel(p: Props) {
  const form = useForm({ code: '' });
  if (!p.setup) {
    return (
      <View style={{ gap: space.md }}>
        <Text style={type.body}>You need an authenticator app on your phone (any app for time-based one-time codes). Heliodor then asks for its 6-digit code after your password.</Text>
        {p.startError ? <Notice title={p.startError.title} detail={p.startError.detail} /> : null}
        <Row>
          <Button label={p.startLabel ?? 'Set up a second factor'} onPress={p.onStart} busy={p.starting} testID="second-factor-start" />
        </Row>
      </View>
    );
  }
  const confirm = () => {
    const found = zodFieldErrors(secondFactorConfirmRequest, form.values);
    form.setErrors(found);
    if (Object.keys(found).length === 0) p.onConfirm(form.values.code);
  };
  return (
    <View style={{ gap: space.md }}>
      <Text style={type.body}>1. In your authenticator app, add an account by scanning this code.</Text>
      <View style={styles.qr}>
        <Image source={{ uri: qrDataUrl(p.setup.uri) }} style={{ width: 200, height: 200 }} accessibilityLabel="QR code for your authenticator app" testID="second-factor-qr" />
      </View>
      <Text style={type.body}>Or type this key into the app (time-based, 6 digits, 30 seconds):</Text>
      <Text selectable style={[type.mono, styles.secret]} testID="second-factor-secret">
        {grouped(p.setup.secret)}
      </Text>
      <Text style={type.body}>2. Enter the code the app shows now.</Text>
      {p.confirmError && !p.confirmError.field('code') ? <Notice title={p.confirmError.title} detail={p.confirmError.detail} /> : null}
      <Field
        label="Code from your app"
        value={form.values.code}
        onChangeText={(v) => form.set('code', v)}
        inputMode="numeric"
        autoComplete="one-time-code"
        mono
        error={sentence(messageFor(form.errors, p.confirmError, 'code'))}
        testID="second-factor-confirm-code"
        onSubmitEditing={confirm}
      />
      <Row>
        <Button label="Turn on" onPress={confirm} busy={p.confirming} testID="second-factor-confirm" />
      </Row>
    </View>
  );
}

/** The ten recovery codes, shown once: each signs in once when the phone is not at hand. */
export function RecoveryCodes({ codes, onDone, doneLabel = 'I have stored them' }: { codes: string[]; onDone: () => void; doneLabel?: string }) {
  const [copied, setCopied] = React.useState<'yes' | 'no' | null>(null);
  const copy = async () => {
    try {
      if (Platform.OS !== 'web' || !navigator.clipboard) throw new Error('no clipboard');
      await navigator.clipboard.writeText(codes.join('\n'));
      setCopied('yes');
    } catch {
      setCopied('no');
    }
  };
  return (
    <Notice tone="moss" title="Second factor on: store your recovery codes" detail="Each code signs you in once if your phone is not at hand. They are shown only now; Heliodor keeps only their digests. Keep them somewhere safe, away from your phone.">
      <View style={styles.codes} testID="recovery-codes">
        {codes.map((c) => (
          <Text key={c} selectable style={[type.mono, styles.code]}>
            {c}
          </Text>
        ))}
      </View>
      <Row wrap>
        <Button label={copied === 'yes' ? 'Copied' : 'Copy the codes'} variant="secondary" onPress={copy} />
        <Button label={doneLabel} onPress={onDone} testID="recovery-codes-done" />
      </Row>
      {copied === 'no' ? <Text style={type.small}>Copying is not available here: select the codes and copy them by hand, or write them down.</Text> : null}
    </Notice>
  );
}

const styles = StyleSheet.create({
  qr: { alignSelf: 'flex-start', padding: space.sm, backgroundColor: colors.surface, borderColor: colors.line, borderWidth: 1, borderRadius: radii.md },
  secret: { backgroundColor: colors.paperDeep, padding: space.sm, borderRadius: radii.sm, letterSpacing: 1 },
  codes: { flexDirection: 'row', flexWrap: 'wrap', gap: space.sm, backgroundColor: colors.surface, borderColor: colors.line, borderWidth: 1, borderRadius: radii.sm, padding: space.sm },
  code: { width: 170 },
});
