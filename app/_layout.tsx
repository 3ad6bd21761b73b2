// Providers only: fonts shipped with the app, TanStack Query, safe areas; the offline banner and the
// service worker (web).
import React from 'react';
import { Slot } from 'expo-router';
import { FontDisplay, useFonts } from 'expo-font';
import { MutationCache, QueryCache, QueryClient, QueryClientProvider, focusManager } from '@tanstack/react-query';
import { SafeAreaProvider } from 'react-native-safe-area-context';
import { Platform, Text, View } from 'react-native';
import { IBMPlexSans_400Regular } from '@expo-google-fonts/ibm-plex-sans/400Regular';
import { IBMPlexSans_500Medium } from '@expo-google-fonts/ibm-plex-sans/500Medium';
import { IBMPlexSans_600SemiBold } from '@expo-google-fonts/ibm-plex-sans/600SemiBold';
import { IBMPlexSans_700Bold } from '@expo-google-fonts/ibm-plex-sans/700Bold';
import { IBMPlexMono_400Regular } from '@expo-google-fonts/ibm-plex-mono/400Regular';
import { IBMPlexMono_500Medium } from '@expo-google-fonts/ibm-plex-mono/500Medium';
import { colors, type } from '../components/theme';
import { ApiError } from '../hooks/api';
import { sessionKeys } from '../hooks/session';
import { useOnline } from '../hooks/online';
import { registerServiceWorker } from '../hooks/service-worker';
import { OfflineBanner } from '../components/offline-banner';
import { focusCss, useGlobalStyle } from '../components/web';

// A session the server has ended (sign-out elsewhere, disabled, role changed) answers 401 to the next
// request: the console then forgets the person, and the console's gate sends the page to sign-in.
const sessionEnded = (err: unknown) => {
  if (err instanceof ApiError && err.status === 401 && queryClient.getQueryData(sessionKeys.me)) queryClient.setQueryData(sessionKeys.me, null);
};

const queryClient: QueryClient = new QueryClient({
  queryCache: new QueryCache({ onError: sessionEnded }),
  mutationCache: new MutationCache({ onError: sessionEnded }),
  defaultOptions: {
    queries: {
      retry: (count, err) => !(err instanceof ApiError && err.status >= 400 && err.status < 500) && count < 2,
      refetchOnWindowFocus: true,
    },
  },
});

// Pause polling while the browser tab is hidden.
if (Platform.OS === 'web' && typeof document !== 'undefined') {
  focusManager.setEventListener((handleFocus) => {
    const onVisibility = () => handleFocus(document.visibilityState === 'visible');
    document.addEventListener('visibilitychange', onVisibility);
    return () => document.removeEventListener('visibilitychange', onVisibility);
  });
}

registerServiceWorker();

const shippedFonts = {
  IBMPlexSans_400Regular,
  IBMPlexSans_500Medium,
  IBMPlexSans_600SemiBold,
  IBMPlexSans_700Bold,
  IBMPlexMono_400Regular,
  IBMPlexMono_500Medium,
};
// On the web the screen does not wait for the fonts (over a megabyte on a weak link): text shows in the
// fallback of components/theme.ts and swaps to the shipped face as each arrives (CSS font-display: swap).
const web = Platform.OS === 'web';
const fontSources = web
  ? Object.fromEntries(Object.entries(shippedFonts).map(([name, uri]) => [name, { uri, display: FontDisplay.SWAP }]))
  : shippedFonts;

export default function RootLayout() {
  const [loaded, error] = useFonts(fontSources);
  const online = useOnline();
  useGlobalStyle('heliodor-focus-css', focusCss);
  if (!web && !loaded && !error) return <View style={{ flex: 1, backgroundColor: colors.paper }} />;
  return (
    <SafeAreaProvider>
      <QueryClientProvider client={queryClient}>
        <View style={{ flex: 1 }}>
          <OfflineBanner online={online} />
          <View style={{ flex: 1 }}>
            <Slot />
          </View>
        </View>
      </QueryClientProvider>
    </SafeAreaProvider>
  );
}

export function ErrorBoundary({ error, retry }: { error: Error; retry: () => void }) {
  return (
    <View style={{ flex: 1, backgroundColor: colors.paper, padding: 24, gap: 12, justifyContent: 'center' }}>
      <Text style={type.title}>Something went wrong on this screen</Text>
      <Text style={type.body}>{error.message}</Text>
      <Text onPress={retry} role="button" style={[type.body, { textDecorationLine: 'underline' }]}>
        Try again
      </Text>
    </View>
  );
}
