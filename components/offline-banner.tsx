// The line across the top of every screen while the console cannot reach the server (hooks/online.ts):
// the app itself still opens from the service worker's copy, so the person learns why nothing loads.
import React from 'react';
import { StyleSheet, Text, View } from 'react-native';
import { colors, fonts, space, type } from './theme';

export function OfflineBanner({ online }: { online: boolean }) {
  if (online) return null;
  return (
    <View role="status" aria-live="polite" testID="offline-banner" style={styles.banner}>
      <Text style={[type.dense, styles.word]}>Offline</Text>
      <Text style={[type.dense, styles.detail]}>The console cannot reach the server. Screens load again when the connection is back.</Text>
    </View>
  );
}

const styles = StyleSheet.create({
  banner: {
    flexDirection: 'row',
    flexWrap: 'wrap',
    alignItems: 'baseline',
    gap: space.sm,
    paddingHorizontal: space.lg,
    paddingVertical: space.sm,
    backgroundColor: colors.amberWash,
    borderBottomWidth: 1,
    borderBottomColor: colors.amber,
  },
  word: { fontFamily: fonts.semibold, color: colors.ink },
  detail: { color: colors.ink, flexShrink: 1 },
});
