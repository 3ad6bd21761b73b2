import React from 'react';
import { KeyboardAvoidingView, StyleSheet, Text, View } from 'react-native';
import { Button, Field, Notice } from './ui';
import { colors, fonts, radii, space, type } from './theme';
import type { ApiError } from '../hooks/api';

type Props = { busy: boolean; error: ApiError | null; onSubmit: (email: string, password: string) => void; footer?: React.ReactNode };

export function SignInScreen({ busy, error, onSubmit, footer }: Props) {
  const [email, setEmail] = React.useState('');
  const [password, setPassword] = React.useState('');
  const [missing, setMissing] = React.useState<{ email?: string; password?: string }>({});
  const submit = () => {
    const m = { email: email.trim() ? undefined : 'Enter your e-mail address.', password: password ? undefined : 'Enter your password.' };
    setMissing(m);
    if (!m.email && !m.password) onSubmit(email.trim(), password);
  };
  return (
    <KeyboardAvoidingView behavior="padding" style={styles.root}>
      <View style={styles.panel}>
        <View style={styles.brand}>
          <View style={styles.mark} />
          <Text style={[type.title, { fontFamily: fonts.bold }]}>Heliodor</Text>
        </View>
        <Text role="heading" aria-level={1} style={type.heading}>
          Sign in
        </Text>
        <Text style={[type.body, { color: colors.inkSoft }]}>Provisioning and firmware releases for solar energy loggers.</Text>
        {error ? <Notice title={error.status === 401 ? 'Sign-in failed' : error.title} detail={error.detail} /> : null}
        <Field
          label="E-mail"
          value={email}
          onChangeText={setEmail}
          autoCapitalize="none"
          autoComplete="email"
          inputMode="email"
          error={missing.email ?? error?.field('email')}
          testID="email"
          onSubmitEditing={submit}
        />
        <Field
          label="Password"
          value={password}
          onChangeText={setPassword}
          secureTextEntry
          autoComplete="current-password"
          error={missing.password ?? error?.field('password')}
          testID="password"
          onSubmitEditing={submit}
        />
        <Button label="Sign in" onPress={submit} busy={busy} testID="sign-in" />
        {footer}
      </View>
    </KeyboardAvoidingView>
  );
}

const styles = StyleSheet.create({
  root: { flex: 1, backgroundColor: colors.paper, alignItems: 'center', justifyContent: 'center', padding: space.lg },
  panel: { width: '100%', maxWidth: 400, backgroundColor: colors.surface, borderColor: colors.line, borderWidth: 1, borderRadius: radii.lg, padding: space.xl, gap: space.lg },
  brand: { flexDirection: 'row', alignItems: 'center', gap: space.sm },
  mark: { width: 20, height: 20, borderRadius: 4, backgroundColor: colors.heliodor, transform: [{ rotate: '45deg' }] },
});
