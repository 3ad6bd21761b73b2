// The console as an installed web app on a phone: the first visit leaves the shell, its scripts and fonts
// with the service worker; a repeat visit with no network opens the app (not a blank page) and says it is
// offline. The network is cut with CDP Network.emulateNetworkConditions (offline), as the DevTools
// protocol defines it; the manifest is checked against the fields the W3C Web Application Manifest
// defines (name, start_url, display, icons with sizes) — docs/SOURCES.md §16.
import { browserApp, screenshot, viewports } from '../helpers/browser';

const session = browserApp({ seed: 'demo' });

test('when the console was opened once and the network is gone, then a reload opens the sign-in screen from the service worker with an offline notice', async () => {
  const context = await session.browser.newContext({ viewport: viewports.phone });
  const page = await context.newPage();
  const errors: string[] = [];
  page.on('pageerror', (e) => errors.push(e.message));

  await page.goto(`${session.base}/sign-in`);
  await page.getByTestId('sign-in').waitFor();
  expect(await page.getByTestId('offline-banner').count()).toBe(0);
  // The service worker installs after the page has loaded, keeps its files, and takes control.
  const kept = await page.evaluate(async () => {
    await navigator.serviceWorker.ready;
    if (!navigator.serviceWorker.controller) await new Promise((r) => navigator.serviceWorker.addEventListener('controllerchange', r, { once: true }));
    const names = await caches.keys();
    const urls: string[] = [];
    for (const name of names) for (const req of await (await caches.open(name)).keys()) urls.push(new URL(req.url).pathname);
    return urls;
  });
  expect(kept.some((u) => u.startsWith('/index.html'))).toBe(true);
  expect(kept.filter((u) => u.endsWith('.js')).length).toBeGreaterThan(1);
  expect(kept.some((u) => u.endsWith('.ttf'))).toBe(true);
  expect(kept.some((u) => u.startsWith('/api/'))).toBe(false);

  const cdp = await context.newCDPSession(page);
  await cdp.send('Network.enable');
  await cdp.send('Network.emulateNetworkConditions', { offline: true, latency: 0, downloadThroughput: -1, uploadThroughput: -1 });

  const response = await page.reload();
  expect(response?.fromServiceWorker()).toBe(true);
  await page.getByTestId('offline-banner').waitFor();
  await expect(page.getByTestId('offline-banner').innerText()).resolves.toContain('Offline');
  await page.getByTestId('email').waitFor();
  await screenshot(page, 'offline-sign-in-phone');

  // Back online: the notice goes away by itself.
  await cdp.send('Network.emulateNetworkConditions', { offline: false, latency: 0, downloadThroughput: -1, uploadThroughput: -1 });
  await page.getByTestId('offline-banner').waitFor({ state: 'detached' });
  expect(errors).toEqual([]);
  await context.close();
});

test('when the shell is loaded, then it links a web app manifest that names the app, opens standalone at / and has 192 and 512 px icons', async () => {
  const page = await session.browser.newPage({ viewport: viewports.phone });
  await page.goto(`${session.base}/sign-in`);
  const href = await page.locator('link[rel="manifest"]').getAttribute('href');
  expect(href).toBe('/manifest.webmanifest');
  const manifest = await page.evaluate(async (u) => (await fetch(u)).json(), href!);
  expect(manifest.name).toBe('Heliodor');
  expect(manifest.start_url).toBe('/');
  expect(manifest.display).toBe('standalone');
  const sizes = (manifest.icons as { src: string; sizes: string; type: string }[]).map((i) => i.sizes);
  expect(sizes).toEqual(expect.arrayContaining(['192x192', '512x512']));
  for (const icon of manifest.icons as { src: string; sizes: string }[]) {
    const dims = await page.evaluate(async (src) => {
      const img = new Image();
      img.src = src;
      await img.decode();
      return `${img.naturalWidth}x${img.naturalHeight}`;
    }, icon.src);
    expect(dims).toBe(icon.sizes);
  }
  await page.close();
});
