// Whether the console can reach the server: the browser's own word (navigator.onLine and its online /
// offline events) and the last API request's fate (hooks/api.ts reports a fetch that got no answer, and
// the next one that did), whichever is worse. The root layout shows the offline banner from it.
import { useSyncExternalStore } from 'react';

let browserOnline = typeof navigator !== 'undefined' && typeof navigator.onLine === 'boolean' ? navigator.onLine : true;
let unreachable = false;
const listeners = new Set<() => void>();
const notify = () => listeners.forEach((l) => l());

if (typeof window !== 'undefined' && typeof window.addEventListener === 'function') {
  window.addEventListener('online', () => {
    browserOnline = true;
    unreachable = false;
    notify();
  });
  window.addEventListener('offline', () => {
    browserOnline = false;
    notify();
  });
}

/** Called by the API client after each request: `reached` is false when fetch got no answer at all. */
export function reportServerReached(reached: boolean) {
  if (unreachable === !reached) return;
  unreachable = !reached;
  notify();
}

export function isOnline(): boolean {
  return browserOnline && !unreachable;
}

function subscribe(listener: () => void) {
  listeners.add(listener);
  return () => listeners.delete(listener);
}

/** True while the console can reach the server as far as it knows. */
export function useOnline(): boolean {
  return useSyncExternalStore(subscribe, isOnline, () => true);
}
