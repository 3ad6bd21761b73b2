// The frame of the screens before the console: sign-in, the code step, invitations, password resets and
// the second-factor set-up production insists on. One centred panel on paper, phone first.
import React from 'react';
import { KeyboardAvoidingView, ScrollView, StyleSheet, Text, View } from 'react-native';
import { Link } from 'expo-router';
import { colors, fonts, radii, space, touchTarget, type } from './theme';

export function AuthFrame({ title, intro, children, wide }: { title: string; intro?: string; children: React.ReactNode; wide?: boolean }) {
  return (
    <KeyboardAvoidingView behavior="padding" style={styles.root}>
      <ScrollView contentContainerStyle={styles.scroll}>
        <View style={[styles.panel, wide && { maxWidth: 560 }]}>
          <View style={styles.brand}>
            <View style={styles.mark} />
            <Text style={[type.title, { fontFamily: fonts.bold }]}>Heliodor</Text>
          </View>
          <Text role="heading" aria-level={1} style={type.heading}>
            {title}
          </Text>
          {intro ? <Text style={[type.body, { color: colors.inkSoft }]}>{intro}</Text> : null}
          {children}
        </View>
      </ScrollView>
    </KeyboardAvoidingView>
  );
}

/** A quiet link between the screens before the console (44 px target). */
export function AuthLink({ href, label, testID }: { href: string; label: string; testID?: string }) {
  return (
    <Link href={href as never} testID={testID} style={styles.link}>
      <Text style={[type.body, { textDecorationLine: 'underline' }]}>{label}</Text>
    </Link>
  );
}

const styles = StyleSheet.create({
  root: { flex: 1, backgroundColor: colors.paper },
  scroll: { flexGrow: 1, alignItems: 'center', justifyContent: 'center', padding: space.lg },
  panel: { width: '100%', maxWidth: 420, backgroundColor: colors.surface, borderColor: colors.line, borderWidth: 1, borderRadius: radii.lg, padding: space.xl, gap: space.lg },
  brand: { flexDirection: 'row', alignItems: 'center', gap: space.sm },
  mark: { width: 20, height: 20, borderRadius: 4, backgroundColor: colors.heliodor, transform: [{ rotate: '45deg' }] },
  link: { minHeight: touchTarget, justifyContent: 'center', alignSelf: 'flex-start', paddingVertical: space.sm } as object,
});
