// Small browser-only helpers (the console's target is the web); each is a no-op elsewhere.
import React from 'react';
import { Platform } from 'react-native';
import { colors } from './theme';

const isWeb = Platform.OS === 'web' && typeof document !== 'undefined';

/** Saves text as a file through a temporary object URL. */
export function downloadText(name: string, text: string, mime = 'text/csv;charset=utf-8') {
  if (!isWeb) return;
  const url = URL.createObjectURL(new Blob([text], { type: mime }));
  const a = document.createElement('a');
  a.href = url;
  a.download = name;
  a.rel = 'noopener';
  document.body.appendChild(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 10_000);
}

/** Opens the browser's file chooser; resolves with the chosen file, or null when cancelled. */
export function pickFile(accept: string, capture?: 'environment'): Promise<File | null> {
  if (!isWeb) return Promise.resolve(null);
  return new Promise((resolve) => {
    const input = document.createElement('input');
    input.type = 'file';
    input.accept = accept;
    if (capture) input.setAttribute('capture', capture);
    input.style.display = 'none';
    input.setAttribute('data-testid', 'file-input');
    input.addEventListener('change', () => {
      resolve(input.files?.[0] ?? null);
      input.remove();
    });
    input.addEventListener('cancel', () => {
      resolve(null);
      input.remove();
    });
    document.body.appendChild(input);
    input.click();
  });
}

/**
 * While `active`, leaving is confirmed: closing or reloading the tab asks through the browser
 * (beforeunload), and in-app links are held until the person confirms in our own dialog.
 * Returns the held destination (or null) and the two answers.
 */
export function useLeaveGuard(active: boolean, navigate: (href: string) => void) {
  const [held, setHeld] = React.useState<string | null>(null);
  React.useEffect(() => {
    if (!isWeb || !active) return;
    const onBeforeUnload = (e: BeforeUnloadEvent) => {
      e.preventDefault();
      e.returnValue = '';
    };
    // Capture phase on the document runs before React's handlers on the app root, so the link never fires.
    const onClick = (e: MouseEvent) => {
      const anchor = (e.target as Element | null)?.closest?.('a[href]') as HTMLAnchorElement | null;
      if (!anchor || anchor.target === '_blank' || anchor.hasAttribute('download')) return;
      const url = new URL(anchor.href, window.location.href);
      if (url.origin !== window.location.origin || url.pathname === window.location.pathname) return;
      e.preventDefault();
      e.stopPropagation();
      setHeld(url.pathname + url.search);
    };
    window.addEventListener('beforeunload', onBeforeUnload);
    document.addEventListener('click', onClick, true);
    return () => {
      window.removeEventListener('beforeunload', onBeforeUnload);
      document.removeEventListener('click', onClick, true);
    };
  }, [active]);
  return {
    held,
    stay: () => setHeld(null),
    leave: () => {
      const href = held;
      setHeld(null);
      if (href) navigate(href);
    },
  };
}

/**
 * The focus ring every focusable element shows when reached by keyboard (WCAG 2.1 SC 2.4.7 Focus Visible):
 * heliodor, the ring colour of docs/DESIGN.md, outside a thin ink line, so it stands out on paper (the ink
 * line) and on the ink sidebar (the heliodor ring) alike — SC 1.4.11 asks 3:1 of a ring against what is beside it.
 */
export const focusCss = `*:focus-visible { outline: 3px solid ${colors.heliodor} !important; outline-offset: 2px !important; box-shadow: 0 0 0 2px ${colors.ink}; }`;

/**
 * Adds a style element while the component is shown (the print rules of the label sheet and the commissioning
 * sheet): each hides everything but its own printed copy, so one left behind would blank the other's print.
 */
export function useGlobalStyle(id: string, css: string) {
  React.useEffect(() => {
    if (!isWeb || document.getElementById(id)) return;
    const style = document.createElement('style');
    style.id = id;
    style.textContent = css;
    document.head.appendChild(style);
    return () => style.remove();
  }, [id, css]);
}

export { isWeb };

/** The console's own origin, for the enrollment links labels encode. */
export const consoleOrigin = () => (isWeb ? window.location.origin : '');


/** data-* attributes on a React Native Web view (`dataSet`, which React Native's types do not declare): hooks for tests. */
export const dataAttributes = (data: Record<string, string>) => ({ dataSet: data }) as object;

/**
 * An element of its own under <body>, outside the app's root, while the component is shown: a printed
 * copy (the label sheet's A4 pages, the commissioning sheet) is rendered into it through a portal, so
 * the print stylesheet can hide everything else.
 */
export function usePrintHost(id: string): HTMLElement | null {
  const [host, setHost] = React.useState<HTMLElement | null>(null);
  React.useEffect(() => {
    const el = document.createElement('div');
    el.id = id;
    document.body.appendChild(el);
    setHost(el);
    return () => el.remove();
  }, [id]);
  return host;
}
