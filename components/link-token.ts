// Mailed links carry their one-time token after "#t=": a URL fragment never reaches a server, so the
// token stays out of every access log and proxy; the screen reads it here and sends it in a body.
import React from 'react';
import { Platform } from 'react-native';

export function useLinkToken(): string | null {
  const [token] = React.useState(() => {
    if (Platform.OS !== 'web' || typeof window === 'undefined') return null;
    const t = new URLSearchParams(window.location.hash.replace(/^#/, '')).get('t');
    return t && /^h(iv|pr)_[A-Za-z0-9_-]{43}$/.test(t) ? t : null;
  });
  return token;
}
