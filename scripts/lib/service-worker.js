// The console's service worker, built from workbox's modules by scripts/lib/web-build.js (esbuild) into
// dist/sw.js, with self.__WB_MANIFEST replaced by the list of files to keep: index.html, every JS chunk,
// the fonts, the manifest and its icons. What it does:
//   - keeps those files (precache) and answers their requests from the cache, so a repeat visit loads
//     no JavaScript over the network and the console opens without one;
//   - answers every navigation (the console's client-side routes) with the kept index.html, except the
//     API and the metrics;
//   - takes over at once when a new build is deployed (skipWaiting, clientsClaim) and drops the files of
//     the build before (cleanupOutdatedCaches);
//   - never keeps API answers, unless an entry is added to API_ANSWERS_KEPT below.
import { clientsClaim } from 'workbox-core';
import { cleanupOutdatedCaches, createHandlerBoundToURL, precacheAndRoute } from 'workbox-precaching';
import { NavigationRoute, registerRoute } from 'workbox-routing';
import { NetworkFirst } from 'workbox-strategies';

self.skipWaiting();
clientsClaim();
cleanupOutdatedCaches();
precacheAndRoute(self.__WB_MANIFEST);
registerRoute(new NavigationRoute(createHandlerBoundToURL('/index.html'), { denylist: [/^\/api\//, /^\/metrics/] }));

/**
 * GET answers of the API a screen may show offline from the last time it was online. Empty: every
 * /api request goes to the network, and nothing stale is shown as current. An entry names a path, e.g.
 * the sites a person may enroll at:
 *   { path: '/api/sites/mine' }
 * Each is answered network first (the live answer when the network answers within 5 s, the kept one
 * otherwise) from the cache `heliodor-api`. The screen that reads it must say when it shows a kept answer.
 */
const API_ANSWERS_KEPT = [];

const keptAnswers = new NetworkFirst({ cacheName: 'heliodor-api', networkTimeoutSeconds: 5 });
for (const kept of API_ANSWERS_KEPT) {
  registerRoute(({ url, request }) => request.method === 'GET' && url.origin === self.location.origin && url.pathname === kept.path, keptAnswers);
}
