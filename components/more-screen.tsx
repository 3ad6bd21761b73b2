import React from 'react';
import { Pressable, StyleSheet, Text, View } from 'react-native';
import { Link } from 'expo-router';
import { Page } from './shell';
import { Card } from './ui';
import { Icon } from './icons';
import { colors, space, touchTarget, type } from './theme';
import type { Destination } from './navigation';
import { roleNames, type Me } from '../schemas/auth';

export function MoreScreen({ me, destinations, onSignOut }: { me: Me; destinations: Destination[]; onSignOut: () => void }) {
  return (
    <Page title="More" subtitle={`${me.name} · ${roleNames[me.role]}`}>
      <Card style={{ padding: 0, gap: 0 }}>
        {destinations.map((d) => (
          <Link key={d.href} href={d.href as never} asChild>
            <Pressable style={styles.item}>
              <Icon name={d.icon} color={colors.ink} />
              <Text style={type.body}>{d.label}</Text>
            </Pressable>
          </Link>
        ))}
        <Pressable role="button" aria-label="Sign out" onPress={onSignOut} style={[styles.item, { borderBottomWidth: 0 }]}>
          <Icon name="signout" color={colors.ember} />
          <Text style={[type.body, { color: colors.ember }]}>Sign out</Text>
        </Pressable>
      </Card>
      <View />
    </Page>
  );
}

const styles = StyleSheet.create({
  item: { flexDirection: 'row', alignItems: 'center', gap: space.md, minHeight: touchTarget + 8, paddingHorizontal: space.lg, borderBottomColor: colors.line, borderBottomWidth: 1 },
});
