// The session gate and the shell around every signed-in screen.
import React from 'react';
import { Redirect, Slot, usePathname, useRouter } from 'expo-router';
import { View } from 'react-native';
import { Shell } from '../../components/shell';
import { destinationsFor } from '../../components/navigation';
import { useBreakpoints } from '../../components/breakpoints';
import { Notice, Skeleton } from '../../components/ui';
import { colors, space } from '../../components/theme';
import { useMe, useSignOut } from '../../hooks/session';
import { SecondFactorInvite } from '../../components/second-factor-invite';
import { useSendQueuedEnrollments } from '../../hooks/enrollment-queue';

export default function ConsoleLayout() {
  const me = useMe();
  const pathname = usePathname();
  const router = useRouter();
  const signOut = useSignOut();
  const { wide } = useBreakpoints();
  const redirectFrom = React.useRef<string | null>(null);
  // Enrollments kept on this phone without a connection go out when the console starts and when it is back online.
  useSendQueuedEnrollments(me.data?.id);

  if (me.isPending) {
    // The navigator stays mounted (hidden) so a deep link keeps its route while the session loads.
    return (
      <View style={{ flex: 1, backgroundColor: colors.paper, padding: space.xl }}>
        <Skeleton rows={4} />
        <View style={{ display: 'none' }}>
          <Slot />
        </View>
      </View>
    );
  }
  if (me.isError) {
    return (
      <View style={{ flex: 1, backgroundColor: colors.paper, padding: space.xl }}>
        <Notice title="The console cannot reach the server" detail={me.error.message} />
      </View>
    );
  }
  if (!me.data) {
    // The pathname changes while the redirect runs; remember the page that was asked for.
    // Keep the query too: a label's link (/enroll?t=…) must arrive with its token after sign-in.
    redirectFrom.current ??= pathname + (typeof window !== 'undefined' && window.location ? window.location.search : '');
    const from = redirectFrom.current;
    const next = from && from !== '/' ? `?next=${encodeURIComponent(from)}` : '';
    return <Redirect href={`/sign-in${next}` as never} />;
  }
  redirectFrom.current = null;
  // Production: admins and release engineers set up a second factor before anything else.
  if (me.data.secondFactor.setupNeeded) return <Redirect href="/second-factor" />;
  return (
    <Shell
      me={me.data}
      wide={wide}
      pathname={pathname}
      destinations={destinationsFor(me.data.role)}
      onSignOut={() => signOut.mutate(undefined, { onSettled: () => router.replace('/sign-in') })}
    >
      {me.data.secondFactor.suggested && !pathname.startsWith('/account') ? <SecondFactorInvite /> : null}
      <Slot />
    </Shell>
  );
}
