// Signing keys: the public halves of the keys release engineers sign with offline.
import React from 'react';
import { StyleSheet, Text, View } from 'react-native';
import { Page } from './shell';
import { Badge, Button, Card, EmptyState, Mono, Notice, Row } from './ui';
import { FormField, useSchemaForm, useServerErrors, whenValid } from './form';
import { ConfirmDialog, ProblemNotice, type ProblemLike } from './release-controls';
import { QueryView, type QueryState } from './query-state';
import { colors, space, type, type Tone } from './theme';
import { absoluteTime, relativeTime } from './format';
import type { List } from '../schemas/common';
import type { KeyState, SigningKey } from '../hooks/keys';
import { registerKeyRequest } from '../schemas/keys';

export type KeyMove = { key: SigningKey; action: 'retire' | 'revoke' };

type Props = {
  state: QueryState<List<SigningKey>>;
  /** May register keys (the session's `can.registerKey`); retiring and revoking follow each key's `can`. */
  canManage: boolean;
  onRegister: (body: { name: string; publicKeyPem: string }, done: () => void) => void;
  registering: boolean;
  registerError: (ProblemLike & { field?: (p: string) => string | undefined }) | null;
  pending: KeyMove | null;
  onPending: (m: KeyMove | null) => void;
  onConfirm: (m: KeyMove) => void;
  changing: boolean;
  changeError: ProblemLike;
  wide: boolean;
};

const keyTones: Record<KeyState, Tone> = { active: 'moss', retired: 'slate', revoked: 'ember' };
const keyWords: Record<KeyState, string> = { active: 'Active', retired: 'Retired', revoked: 'Revoked' };
const algorithmWords: Record<string, string> = { ed25519: 'Ed25519', 'ecdsa-p256-sha256': 'ECDSA P-256 / SHA-256' };

export function KeyScreen({ state, canManage, onRegister, registering, registerError, pending, onPending, onConfirm, changing, changeError, wide }: Props) {
  return (
    <Page title="Signing keys" subtitle="Public keys that verify signed images. Private keys stay offline with the release engineers.">
      <View style={wide ? styles.columns : { gap: space.lg }}>
        <View style={wide ? { flex: 3, minWidth: 0 } : undefined}>
          <QueryView state={state} rows={4}>
            {(data) =>
              data.rows.length ? (
                <View style={{ gap: space.sm }}>
                  {data.rows.map((k) => (
                    <KeyCard key={k.id} k={k} onPending={onPending} />
                  ))}
                </View>
              ) : (
                <EmptyState
                  title="No signing keys yet"
                  detail={canManage ? 'Make a key pair offline with `heliodor keys new`, then register its public key here.' : 'An admin registers the public keys that sign images.'}
                />
              )
            }
          </QueryView>
        </View>
        {canManage ? (
          <View style={wide ? { flex: 2, minWidth: 0 } : undefined}>
            <RegisterForm onRegister={onRegister} busy={registering} error={registerError} />
          </View>
        ) : null}
      </View>
      {pending ? <KeyDialog move={pending} onCancel={() => onPending(null)} onConfirm={() => onConfirm(pending)} busy={changing} error={changeError} /> : null}
    </Page>
  );
}

function KeyCard({ k, onPending }: { k: SigningKey; onPending: (m: KeyMove) => void }) {
  return (
    <Card testID="key-card">
      <Row style={{ justifyContent: 'space-between' }} wrap>
        <Text style={type.heading}>{k.name}</Text>
        <Badge label={keyWords[k.state]} tone={keyTones[k.state]} />
      </Row>
      <Row wrap>
        <Text style={type.label}>Key id</Text>
        <Mono>{k.keyId}</Mono>
        <Text style={type.small}>· {algorithmWords[k.algorithm] ?? k.algorithm}</Text>
      </Row>
      <Text style={type.small}>
        Registered <Text aria-label={absoluteTime(k.createdAt)}>{relativeTime(k.createdAt)}</Text> · signed {k.releaseCount} {k.releaseCount === 1 ? 'release' : 'releases'}
        {k.retiredAt ? ` · retired ${relativeTime(k.retiredAt)}` : ''}
        {k.revokedAt ? ` · revoked ${relativeTime(k.revokedAt)}` : ''}
      </Text>
      {k.can.retire || k.can.revoke ? (
        <Row wrap>
          {k.can.retire ? <Button label="Retire" variant="secondary" onPress={() => onPending({ key: k, action: 'retire' })} /> : null}
          {k.can.revoke ? <Button label="Revoke" variant="danger" onPress={() => onPending({ key: k, action: 'revoke' })} /> : null}
        </Row>
      ) : null}
    </Card>
  );
}

/**
 * The registration request, with two checks the console makes before anything leaves the browser:
 * a private key is never sent (the server would refuse it, but it must not travel at all), and the
 * text must at least look like a PEM public key (the server parses it and names what is wrong).
 */
const keyForm = registerKeyRequest.extend({
  publicKeyPem: registerKeyRequest.shape.publicKeyPem.superRefine((pem, ctx) => {
    if (/PRIVATE KEY/.test(pem)) {
      ctx.addIssue({ code: 'custom', message: 'This is a PRIVATE key. Do not paste it here or anywhere online: paste the matching public key (the .public.pem file).' });
    } else if (!/-----BEGIN PUBLIC KEY-----/.test(pem)) {
      ctx.addIssue({ code: 'custom', message: 'Paste a PEM public key, starting with -----BEGIN PUBLIC KEY-----.' });
    }
  }),
});

function RegisterForm({ onRegister, busy, error }: { onRegister: Props['onRegister']; busy: boolean; error: Props['registerError'] }) {
  const form = useSchemaForm(keyForm, { defaultValues: { name: '', publicKeyPem: '' } });
  const { control } = form;
  useServerErrors(form, error);
  const submit = whenValid(form, ({ name, publicKeyPem }) => onRegister({ name, publicKeyPem: publicKeyPem.trim() + '\n' }, () => form.reset()));
  return (
    <Card>
      <Text role="heading" aria-level={2} style={type.heading}>
        Register a public key
      </Text>
      <Notice tone="amber" title="Paste the PUBLIC key" detail="The console never receives a private key. Keep the .private.pem file offline; paste the .public.pem file made by `heliodor keys new`." />
      <FormField control={control} name="name" label="Name" testID="key-name" />
      <FormField
        control={control}
        name="publicKeyPem"
        label="Public key (PEM)"
        mono
        multiline
        autoCapitalize="none"
        autoCorrect={false}
        placeholder={'-----BEGIN PUBLIC KEY-----\n…\n-----END PUBLIC KEY-----'}
        hint="Ed25519 or ECDSA P-256, as SubjectPublicKeyInfo PEM."
        style={{ minHeight: 120, paddingVertical: space.sm, fontSize: 13 }}
        testID="key-pem"
      />
      <ProblemNotice error={error} />
      <Row style={{ justifyContent: 'flex-end' }}>
        <Button label="Register key" busy={busy} onPress={submit} testID="register-key" />
      </Row>
    </Card>
  );
}

function KeyDialog({ move, onCancel, onConfirm, busy, error }: { move: KeyMove; onCancel: () => void; onConfirm: () => void; busy: boolean; error: ProblemLike }) {
  const k = move.key;
  if (move.action === 'retire') {
    return (
      <ConfirmDialog visible title={`Retire ${k.name}`} confirmLabel="Retire key" busy={busy} error={error} onCancel={onCancel} onConfirm={onConfirm} testID="confirm-key">
        <Text style={type.body}>Uploads signed with this key are refused from now on. Releases already published with it keep verifying, so loggers are not affected.</Text>
        <Text style={type.small}>Retiring cannot be undone; register a new key to sign new images.</Text>
      </ConfirmDialog>
    );
  }
  return (
    <ConfirmDialog visible title={`Revoke ${k.name}`} confirmLabel="Revoke key" tone="danger" busy={busy} error={error} onCancel={onCancel} onConfirm={onConfirm} testID="confirm-key">
      <Text style={type.body}>
        Revoke when the private key may be known to someone else. Unpublished uploads signed with it are refused, and the {k.releaseCount} {k.releaseCount === 1 ? 'release' : 'releases'} it signed {k.releaseCount === 1 ? 'is' : 'are'} flagged for you to stop or withdraw.
      </Text>
      <Text style={[type.small, { color: colors.ember }]}>This is final: a revoked key never becomes active again.</Text>
    </ConfirmDialog>
  );
}

const styles = StyleSheet.create({ columns: { flexDirection: 'row', gap: space.lg, alignItems: 'flex-start' } });
