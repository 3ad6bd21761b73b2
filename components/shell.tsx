// The signed-in frame: a sidebar on wide screens, a bottom tab bar on phones (docs/DESIGN.md).
import React from 'react';
import { Pressable, ScrollView, StyleSheet, Text, View } from 'react-native';
import { Link } from 'expo-router';
import { useSafeAreaInsets } from 'react-native-safe-area-context';
import type { Me } from '../schemas/auth';
import { roleNames } from '../schemas/auth';
import { BREAKPOINTS } from './breakpoints';
import { Icon } from './icons';
import { isCurrent, type Destination } from './navigation';
import { colors, fonts, space, touchTarget, type } from './theme';

type ShellProps = {
  me: Me;
  wide: boolean;
  pathname: string;
  destinations: Destination[];
  onSignOut: () => void;
  children: React.ReactNode;
};

export function Shell({ me, wide, pathname, destinations, onSignOut, children }: ShellProps) {
  const insets = useSafeAreaInsets();
  // A new page starts at its top, not where the previous page was scrolled to.
  const scroller = React.useRef<ScrollView>(null);
  React.useEffect(() => {
    scroller.current?.scrollTo({ y: 0, animated: false });
  }, [pathname]);
  // One tree for both layouts: the page sits at the same place whether the sidebar or the tab bar is
  // shown, so a width change (turning a tablet, a print preview laying the page out at paper width)
  // never remounts the page and loses what it holds, such as labels whose tokens are shown only once.
  const tabs = destinations.filter((d) => d.tab).slice(0, 4);
  const moreCurrent = !tabs.some((t) => isCurrent(t.href, pathname));
  return (
    <View style={wide ? styles.wideRoot : [styles.phoneRoot, { paddingTop: insets.top }]}>
      {wide ? (
        <View style={styles.sidebar} role="navigation" aria-label="Main">
          <Wordmark />
          <ScrollView contentContainerStyle={{ gap: 2 }}>
            {destinations.map((d) => (
              <SideLink key={d.href} d={d} current={isCurrent(d.href, pathname)} />
            ))}
          </ScrollView>
          <View style={styles.sidebarFoot}>
            <Text style={[type.body, { color: colors.onInk, fontFamily: fonts.medium }]}>{me.name}</Text>
            <Text style={[type.small, { color: '#B9C2C4' }]}>{roleNames[me.role]}</Text>
            <Pressable role="button" aria-label="Sign out" onPress={onSignOut} style={styles.signOut}>
              <Icon name="signout" color={colors.onInk} size={18} />
              <Text style={[type.body, { color: colors.onInk }]}>Sign out</Text>
            </Pressable>
          </View>
        </View>
      ) : null}
      <ScrollView ref={scroller} style={{ flex: 1 }} contentContainerStyle={wide ? styles.wideContent : styles.phoneContent}>
        <View style={wide ? styles.widePage : styles.phonePage}>{children}</View>
      </ScrollView>
      {wide ? null : (
        <View style={[styles.tabBar, { paddingBottom: Math.max(insets.bottom, space.xs) }]} role="tablist" aria-label="Main">
          {tabs.map((d) => (
            <TabLink key={d.href} d={d} current={isCurrent(d.href, pathname)} />
          ))}
          <TabLink d={{ href: '/more', label: 'More', icon: 'more', roles: [] }} current={moreCurrent} />
        </View>
      )}
    </View>
  );
}

function Wordmark() {
  return (
    <View style={styles.wordmark}>
      <View style={styles.mark} />
      <Text style={[type.heading, { color: colors.onInk, fontFamily: fonts.bold, letterSpacing: 0.5 }]}>Heliodor</Text>
    </View>
  );
}

function SideLink({ d, current }: { d: Destination; current: boolean }) {
  return (
    <Link href={d.href as never} asChild>
      <Pressable aria-current={current ? 'page' : undefined} style={StyleSheet.flatten([styles.sideLink, current && styles.sideLinkCurrent])}>
        <Icon name={d.icon} color={current ? colors.heliodor : colors.onInk} size={20} />
        <Text style={[type.body, { color: current ? colors.heliodor : colors.onInk, fontFamily: current ? fonts.semibold : fonts.regular }]}>{d.label}</Text>
      </Pressable>
    </Link>
  );
}

function TabLink({ d, current }: { d: Destination; current: boolean }) {
  return (
    <Link href={d.href as never} asChild>
      <Pressable role="tab" aria-selected={current} aria-label={d.label} style={styles.tab}>
        <Icon name={d.icon} color={current ? colors.ink : colors.inkFaint} />
        <Text style={[styles.tabLabel, { color: current ? colors.ink : colors.inkFaint, fontFamily: current ? fonts.semibold : fonts.regular }]}>{d.label}</Text>
        {current ? <View style={styles.tabMarker} /> : null}
      </Pressable>
    </Link>
  );
}

/** A page inside the shell: title, optional actions, then content. */
export function Page({ title, subtitle, actions, children }: { title: string; subtitle?: string; actions?: React.ReactNode; children: React.ReactNode }) {
  return (
    <View style={{ gap: space.lg }}>
      <View style={styles.pageHead}>
        <View style={{ flexShrink: 1, gap: 2 }}>
          <Text role="heading" aria-level={1} style={type.title}>
            {title}
          </Text>
          {subtitle ? <Text style={type.small}>{subtitle}</Text> : null}
        </View>
        {actions ? <View style={{ flexDirection: 'row', gap: space.sm, flexWrap: 'wrap' }}>{actions}</View> : null}
      </View>
      {children}
    </View>
  );
}

const styles = StyleSheet.create({
  wideRoot: { flex: 1, flexDirection: 'row', backgroundColor: colors.paper },
  sidebar: { width: 232, backgroundColor: colors.ink, paddingVertical: space.lg, paddingHorizontal: space.md, gap: space.lg },
  sidebarFoot: { marginTop: 'auto', borderTopColor: '#3A4A50', borderTopWidth: 1, paddingTop: space.md, gap: 2 },
  signOut: { flexDirection: 'row', alignItems: 'center', gap: space.sm, minHeight: touchTarget, marginTop: space.xs },
  wordmark: { flexDirection: 'row', alignItems: 'center', gap: space.sm, paddingHorizontal: space.sm },
  mark: { width: 18, height: 18, borderRadius: 4, backgroundColor: colors.heliodor, transform: [{ rotate: '45deg' }] },
  sideLink: { flexDirection: 'row', alignItems: 'center', gap: space.md, minHeight: touchTarget, paddingHorizontal: space.sm, borderRadius: 6 },
  sideLinkCurrent: { backgroundColor: '#2B3A40' },
  wideContent: { padding: space.xl, alignItems: 'center' },
  phoneRoot: { flex: 1, backgroundColor: colors.paper },
  phoneContent: { padding: space.lg, paddingBottom: space.xxl },
  widePage: { width: '100%', maxWidth: BREAKPOINTS.contentMax },
  phonePage: { width: '100%' },
  tabBar: { flexDirection: 'row', backgroundColor: colors.surface, borderTopColor: colors.line, borderTopWidth: 1 },
  tab: { flex: 1, alignItems: 'center', justifyContent: 'center', minHeight: 56, paddingTop: space.xs, gap: 2 },
  tabLabel: { fontSize: 12 },
  tabMarker: { position: 'absolute', top: 0, left: '30%', right: '30%', height: 3, backgroundColor: colors.heliodor, borderRadius: 2 },
  pageHead: { flexDirection: 'row', justifyContent: 'space-between', alignItems: 'flex-end', gap: space.md, flexWrap: 'wrap' },
});
