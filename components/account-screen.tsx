// One's own account: the name the team sees, the password, the second factor (QR code and recovery
// codes) and signing out everywhere. Phone first: one column; wide: two.
import React from 'react';
import { StyleSheet, Text, View } from 'react-native';
import { z } from 'zod';
import { Page } from './shell';
import { Badge, Button, Card, Field, Notice, Row } from './ui';
import { ConfirmDialog } from './release-controls';
import { space, type } from './theme';
import { messageFor, sentence, useForm } from './form-state';
import { PASSWORD_HINT } from './password-screens';
import { RecoveryCodes, SecondFactorSetupPanel } from './second-factor-setup';
import { accountUpdateRequest, passwordSchema, roleNames, type Me, type SecondFactorSetup } from '../schemas/auth';
import type { ApiError } from '../hooks/api';

type Action<A extends unknown[] = []> = { run: (...args: A) => void; busy: boolean; error: ApiError | null };

export type AccountProps = {
  me: Me;
  wide: boolean;
  rename: Action<[string]> & { saved: boolean };
  changePassword: Action<[string, string]> & { changed: boolean };
  secondFactor: {
    setup: SecondFactorSetup | null;
    start: Action;
    confirm: Action<[string]>;
    recoveryCodes: string[] | null;
    onRecoveryCodesStored: () => void;
    turnOff: Action<[string]>;
  };
  signOutEverywhere: Action;
};

const passwordForm = z
  .object({ currentPassword: z.string().min(1, 'is required'), newPassword: passwordSchema, repeat: z.string() })
  .refine((v) => v.newPassword === v.repeat, { message: 'does not match the new password', path: ['repeat'] });

export function AccountScreen(p: AccountProps) {
  const [confirmEverywhere, setConfirmEverywhere] = React.useState(false);
  return (
    <Page title="Account" subtitle={`${p.me.email} · ${roleNames[p.me.role]}`}>
      <View style={p.wide ? styles.columns : styles.stack}>
        <View style={p.wide ? styles.column : styles.stack}>
          <SecondFactorCard {...p} />
          <Card>
            <Text role="heading" aria-level={2} style={type.heading}>
              Sessions
            </Text>
            <Text style={type.body}>Signed in on a phone you no longer have, or on a shared computer? Sign out everywhere, this browser included.</Text>
            <Row>
              <Button label="Sign out everywhere" variant="secondary" onPress={() => setConfirmEverywhere(true)} testID="sign-out-everywhere" />
            </Row>
          </Card>
        </View>
        <View style={p.wide ? styles.column : styles.stack}>
          <NameCard {...p} />
          <PasswordCard {...p} />
        </View>
      </View>
      <ConfirmDialog
        visible={confirmEverywhere}
        title="Sign out everywhere"
        confirmLabel="Sign out everywhere"
        tone="danger"
        busy={p.signOutEverywhere.busy}
        error={p.signOutEverywhere.error}
        onCancel={() => setConfirmEverywhere(false)}
        onConfirm={() => p.signOutEverywhere.run()}
        testID="confirm-sign-out-everywhere"
      >
        <Text style={type.body}>Every session of yours ends, on every device, including this one. You sign in again with your password{p.me.secondFactor.on ? ' and a code' : ''}.</Text>
      </ConfirmDialog>
    </Page>
  );
}

function NameCard({ me, rename }: AccountProps) {
  const form = useForm({ name: me.name });
  const submit = () => form.submit(accountUpdateRequest, (v) => rename.run(v.name));
  return (
    <Card>
      <Text role="heading" aria-level={2} style={type.heading}>
        Name
      </Text>
      <Field label="The name the team sees" value={form.values.name} onChangeText={(v) => form.set('name', v)} autoComplete="name" error={sentence(messageFor(form.errors, rename.error, 'name'))} testID="account-name" onSubmitEditing={submit} />
      {rename.saved ? <Text style={type.small}>Saved.</Text> : null}
      <Row>
        <Button label="Save name" variant="secondary" onPress={submit} busy={rename.busy} testID="account-name-save" />
      </Row>
    </Card>
  );
}

function PasswordCard({ changePassword }: AccountProps) {
  const form = useForm({ currentPassword: '', newPassword: '', repeat: '' });
  const { reset } = form;
  React.useEffect(() => {
    if (changePassword.changed) reset();
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, [changePassword.changed]);
  const submit = () => form.submit(passwordForm, (v) => changePassword.run(v.currentPassword, v.newPassword));
  const serverOnly = changePassword.error && !changePassword.error.fieldErrors.length ? changePassword.error : null;
  return (
    <Card>
      <Text role="heading" aria-level={2} style={type.heading}>
        Password
      </Text>
      {changePassword.changed ? <Notice tone="moss" title="Password changed" detail="Your other sessions were signed out; this one goes on." /> : null}
      {serverOnly ? <Notice title={serverOnly.title} detail={serverOnly.detail} /> : null}
      <Field label="Current password" value={form.values.currentPassword} onChangeText={(v) => form.set('currentPassword', v)} secureTextEntry autoComplete="current-password" error={sentence(messageFor(form.errors, changePassword.error, 'currentPassword'))} testID="current-password" />
      <Field label="New password" value={form.values.newPassword} onChangeText={(v) => form.set('newPassword', v)} secureTextEntry autoComplete="new-password" hint={PASSWORD_HINT} error={sentence(messageFor(form.errors, changePassword.error, 'newPassword'))} testID="account-new-password" />
      <Field label="New password again" value={form.values.repeat} onChangeText={(v) => form.set('repeat', v)} secureTextEntry autoComplete="new-password" error={sentence(form.errors.repeat)} testID="account-new-password-repeat" onSubmitEditing={submit} />
      <Text style={type.small}>Changing your password signs you out everywhere else.</Text>
      <Row>
        <Button label="Change password" variant="secondary" onPress={submit} busy={changePassword.busy} testID="change-password" />
      </Row>
    </Card>
  );
}

function SecondFactorCard({ me, secondFactor: sf }: AccountProps) {
  const [off, setOff] = React.useState(false);
  const [moving, setMoving] = React.useState(false);
  const form = useForm({ password: '' });
  const state = me.secondFactor;
  React.useEffect(() => {
    if (!state.on) setOff(false);
  }, [state.on]);
  return (
    <Card testID="second-factor-card">
      <Row style={{ justifyContent: 'space-between' }} wrap>
        <Text role="heading" aria-level={2} style={type.heading}>
          Second factor
        </Text>
        <Badge label={state.on ? 'On' : 'Off'} tone={state.on ? 'moss' : state.required || state.suggested ? 'amber' : 'slate'} testID="second-factor-state" />
      </Row>
      {state.required ? (
        <Text style={type.body}>Your role can ship firmware or signing keys, so a second factor is required.</Text>
      ) : state.suggested ? (
        <Text style={type.body}>Your role can ship firmware or signing keys. Production requires a second factor for it; set one up now.</Text>
      ) : (
        <Text style={type.body}>After your password, Heliodor also asks for a code from your phone. Optional for your role.</Text>
      )}
      {sf.recoveryCodes ? (
        <RecoveryCodes
          codes={sf.recoveryCodes}
          onDone={() => {
            setMoving(false);
            sf.onRecoveryCodesStored();
          }}
        />
      ) : null}
      {!state.on || moving || sf.setup ? (
        sf.recoveryCodes ? null : (
          <SecondFactorSetupPanel
            setup={sf.setup}
            onStart={sf.start.run}
            starting={sf.start.busy}
            startError={sf.start.error}
            onConfirm={sf.confirm.run}
            confirming={sf.confirm.busy}
            confirmError={sf.confirm.error}
            startLabel={state.on ? 'Move to a new phone' : undefined}
          />
        )
      ) : (
        <Row wrap>
          <Button label="Move to a new phone" variant="secondary" onPress={() => setMoving(true)} />
          {state.required ? null : <Button label="Turn off" variant="secondary" onPress={() => setOff(true)} testID="second-factor-off" />}
        </Row>
      )}
      <ConfirmDialog
        visible={off}
        title="Turn off the second factor"
        confirmLabel="Turn off"
        tone="danger"
        busy={sf.turnOff.busy}
        error={sf.turnOff.error && !sf.turnOff.error.field('password') ? sf.turnOff.error : null}
        onCancel={() => setOff(false)}
        onConfirm={() => form.submit(z.object({ password: z.string().min(1, 'is required') }), (v) => sf.turnOff.run(v.password))}
        testID="confirm-second-factor-off"
      >
        <Text style={type.body}>Signing in then needs only your password. Your other sessions are signed out and your recovery codes stop working.</Text>
        <Field label="Your password" value={form.values.password} onChangeText={(v) => form.set('password', v)} secureTextEntry autoComplete="current-password" error={sentence(messageFor(form.errors, sf.turnOff.error, 'password'))} testID="second-factor-off-password" />
      </ConfirmDialog>
    </Card>
  );
}

const styles = StyleSheet.create({
  columns: { flexDirection: 'row', gap: space.lg, alignItems: 'flex-start' },
  column: { flex: 1, minWidth: 0, gap: space.lg },
  stack: { gap: space.lg },
});
