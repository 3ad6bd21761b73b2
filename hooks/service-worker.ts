// Installs the console's service worker (dist/sw.js, written by scripts/lib/web-build.js) in the exported
// web app, after the page has loaded so it never competes with the first screen for a weak link. The
// development server (npm run dev) and tests have no sw.js and register nothing.
import { Platform } from 'react-native';

export function registerServiceWorker() {
  if (Platform.OS !== 'web' || process.env.NODE_ENV !== 'production') return;
  if (typeof window === 'undefined' || typeof navigator === 'undefined' || !('serviceWorker' in navigator)) return;
  const register = () => {
    navigator.serviceWorker.register('/sw.js', { scope: '/' }).catch(() => undefined);
  };
  if (document.readyState === 'complete') register();
  else window.addEventListener('load', register, { once: true });
}
