// Every console screen, at phone (390 × 844) and wide (1280 × 800) size, checked in Chromium with
// axe-core (a reference checker outside the project) against WCAG 2.1 levels A and AA; on the phone,
// every button, link and input measured against the 44 × 44 px target (WCAG 2.1 SC 2.5.5 Target Size,
// and docs/DESIGN.md: gloves on a roof); on the wide layout, Tab reaches the main actions of sign-in,
// register and release detail, and every element it reaches shows a focus ring (WCAG 2.1 SC 2.4.7
// Focus Visible). One browser, one context per size, signed in once per size, on the full demo seed.
//
// No axe rule is turned off. The contexts bypass the console's Content-Security-Policy only so that
// page.addScriptTag can put axe-core's source on the page (the policy allows no inline script).
import fs from 'node:fs';
import path from 'node:path';
import type { BrowserContext, Page } from 'playwright-core';
import type { Agent } from 'supertest';
import { csrf, listeningApp, testPassword } from '../helpers/app';
import { artifacts, launchChromium, viewports } from '../helpers/browser';
import type { Browser } from 'playwright-core';

const axeSource = fs.readFileSync(require.resolve('axe-core/axe.min.js'), 'utf8');
/** axe-core's tags for WCAG 2.0 and 2.1, levels A and AA. */
const wcagTags = ['wcag2a', 'wcag2aa', 'wcag21a', 'wcag21aa'];
/** WCAG 2.1 SC 2.5.5 (Target Size): at least 44 by 44 CSS pixels. */
const minTarget = 44;

type AxeNode = { target: unknown[]; any: { data?: { fgColor?: string; bgColor?: string; contrastRatio?: number } | null }[] };
type AxeViolation = { id: string; impact: string | null; help: string; nodes: AxeNode[] };

const app = listeningApp({ seed: 'demo', seedSize: 'full' });
let browser: Browser;
let admin: Agent;
const ids = {} as { logger: string; release: string; site: string; laggingSite: string; model: string; board: string };
/** Every violation found, any impact, per size and screen: written to tests/e2e/artifacts/accessibility.json. */
const found: Record<string, Record<string, { id: string; impact: string | null; nodes: number }[]>> = {};

beforeAll(async () => {
  // Chromium's fake camera: the phone context is allowed the camera (the scanner shows), the wide one is not (its fallback shows).
  browser = await launchChromium(['--use-fake-ui-for-media-stream', '--use-fake-device-for-media-stream']);
  admin = app.t.agent();
  expect((await admin.post('/api/auth/sign-in').send({ email: 'morgan@fernhollow.example', password: testPassword })).status).toBe(200);
  const one = async (sql: string) => ((await app.t.sequelize.query(sql)) as [{ id: string }[], unknown])[0][0].id;
  ids.logger = await one("SELECT id FROM loggers WHERE site_id IS NOT NULL ORDER BY serial LIMIT 1");
  ids.release = await one("SELECT id FROM releases ORDER BY (state = 'widening') DESC, created_at DESC LIMIT 1");
  ids.site = await one('SELECT id FROM sites ORDER BY name LIMIT 1');
  const model = (await admin.get('/api/models')).body.rows[0];
  ids.model = model.id;
  ids.board = model.boards[0].label;
  const lagging = await admin.get('/api/fleet/lagging-sites');
  expect(lagging.status).toBe(200);
  ids.laggingSite = lagging.body.rows[0]?.siteId ?? ids.site;
});

afterAll(async () => {
  await browser?.close();
  fs.mkdirSync(artifacts, { recursive: true });
  fs.writeFileSync(path.join(artifacts, sizes.length === 1 ? `accessibility-${sizes[0]}.json` : 'accessibility.json'), JSON.stringify(found, null, 2));
});

/** Waits until the screen has its title and nothing is loading any more. */
async function settled(page: Page) {
  await page.getByRole('heading', { level: 1 }).first().waitFor();
  await page.waitForFunction(() => !document.querySelector('[aria-busy="true"]'));
}

async function open(page: Page, route: string) {
  await page.goto(`${app.base}${route}`);
  await settled(page);
}

/** The colours axe measured, for a contrast finding. */
function contrast(node: AxeNode): string {
  const d = node.any.find((c) => c.data?.contrastRatio)?.data;
  return d ? ` [${d.fgColor} on ${d.bgColor}: ${d.contrastRatio}:1]` : '';
}

/** axe-core over the whole page; the serious and critical findings as readable lines (rule, impact, targets). */
async function axeProblems(page: Page, size: string, screen: string): Promise<string[]> {
  await page.addScriptTag({ content: axeSource });
  const violations = (await page.evaluate(
    (tags) => (window as unknown as { axe: { run: (c: Document, o: object) => Promise<{ violations: unknown[] }> } }).axe.run(document, { runOnly: { type: 'tag', values: tags }, resultTypes: ['violations'] }).then((r) => r.violations),
    wcagTags,
  )) as AxeViolation[];
  (found[size] ??= {})[screen] = violations.map((v) => ({ id: v.id, impact: v.impact, nodes: v.nodes.length }));
  return violations
    .filter((v) => v.impact === 'serious' || v.impact === 'critical')
    .map((v) => `${v.id} (${v.impact}): ${v.help} — ${v.nodes.map((n) => n.target.join(' ') + contrast(n)).join(', ')}`);
}

/**
 * Buttons, links and inputs smaller than 44 × 44 px. Exempt, as WCAG 2.5.5 allows: a link inline in a
 * sentence (display inline, inside text that says more than the link). Hidden elements take no touches.
 */
async function smallTargets(page: Page): Promise<string[]> {
  return page.evaluate((min) => {
    const selector = 'a[href], button, input:not([type="hidden"]), select, textarea, [role="button"], [role="link"], [role="tab"], [role="radio"], [role="checkbox"], [role="switch"], [role="menuitem"]';
    const out: string[] = [];
    for (const el of Array.from(document.querySelectorAll<HTMLElement>(selector))) {
      const style = getComputedStyle(el);
      const box = el.getBoundingClientRect();
      if (box.width === 0 || box.height === 0 || style.visibility === 'hidden' || el.closest('[aria-hidden="true"]')) continue;
      // A radio or checkbox inside a labelled control that is itself a target: the control is measured.
      if (el.parentElement?.closest(selector)) continue;
      const inline = style.display === 'inline' && (el.parentElement?.textContent ?? '').trim().length > (el.textContent ?? '').trim().length;
      if (inline) continue;
      if (box.width + 0.5 < min || box.height + 0.5 < min) {
        const name = el.getAttribute('aria-label') ?? el.getAttribute('data-testid') ?? el.textContent?.trim().slice(0, 40) ?? el.tagName;
        out.push(`${el.tagName.toLowerCase()}[role=${el.getAttribute('role') ?? ''}] "${name}" ${Math.round(box.width)}×${Math.round(box.height)}`);
      }
    }
    return out;
  }, minTarget);
}

/** Presses Tab up to `max` times; for each stop, who has focus and whether it shows a ring (outline or box-shadow). */
async function tabStops(page: Page, max = 80) {
  await page.evaluate(() => (document.activeElement as HTMLElement | null)?.blur());
  const stops: { name: string; ring: boolean }[] = [];
  for (let i = 0; i < max; i++) {
    await page.keyboard.press('Tab');
    const stop = await page.evaluate(() => {
      const el = document.activeElement as HTMLElement | null;
      if (!el || el === document.body) return null;
      const s = getComputedStyle(el);
      const ring = (s.outlineStyle !== 'none' && parseFloat(s.outlineWidth) > 0) || (s.boxShadow !== 'none' && s.boxShadow !== '');
      return { name: el.getAttribute('data-testid') ?? el.getAttribute('aria-label') ?? el.textContent?.trim().slice(0, 40) ?? el.tagName, ring };
    });
    if (!stop) continue;
    if (stops.length && stops[0].name === stop.name && i > 1) break; // back at the start
    stops.push(stop);
  }
  return stops;
}

type Screen = {
  name: string;
  visit: (page: Page, size: keyof typeof viewports) => Promise<void>;
  /** The main actions Tab must reach on the wide layout (test ids or accessible names). */
  mainActions?: (page: Page) => Promise<string[]>;
};

let registered = 0;
async function registerForEnroll() {
  registered += 1;
  const res = await admin.post('/api/loggers').set(csrf).send({ serial: `FL2-A11Y${String(registered).padStart(2, '0')}`, modelId: ids.model, board: ids.board, channel: 'stable' });
  expect(res.status).toBe(201);
  return res.body.token as string;
}

const screens: Screen[] = [
  {
    name: 'sign-in',
    visit: (page) => open(page, '/sign-in'),
    mainActions: async () => ['email', 'password', 'sign-in'],
  },
  { name: 'forgot password', visit: (page) => open(page, '/forgot-password') },
  { name: 'invitation without a token', visit: (page) => open(page, '/invitation') },
  { name: 'reset password without a token', visit: (page) => open(page, '/reset-password') },
  {
    name: 'overview',
    visit: async (page) => {
      await page.goto(`${app.base}/sign-in`);
      await page.getByTestId('email').fill('morgan@fernhollow.example');
      await page.getByTestId('password').fill(testPassword);
      await page.getByTestId('sign-in').click();
      await page.getByRole('heading', { name: 'Overview' }).waitFor();
      await settled(page);
    },
  },
  { name: 'loggers (fleet table)', visit: (page) => open(page, '/loggers') },
  { name: 'logger detail', visit: (page) => open(page, `/loggers/${ids.logger}`) },
  {
    name: 'register form',
    visit: (page) => open(page, '/loggers/register'),
    mainActions: async (page) => ['serial', (await page.getByRole('radiogroup', { name: 'Model' }).getByRole('radio').first().getAttribute('aria-label')) ?? 'a model', 'register-one'],
  },
  {
    name: 'register labels',
    visit: async (page, size) => {
      await open(page, '/loggers/register');
      await page.getByTestId('serial').fill(`FL2-A11YR${size === 'phone' ? 'P' : 'W'}`);
      await page.getByRole('radiogroup', { name: 'Model' }).getByRole('radio').first().click();
      await page.getByRole('radiogroup', { name: 'Board revision' }).getByRole('radio').first().click();
      await page.getByTestId('register-one').click();
      await page.getByTestId('token-sheet').waitFor();
      await page.getByTestId('label').first().locator('img').waitFor();
    },
  },
  { name: 'enroll scan', visit: (page) => open(page, '/enroll') },
  {
    name: 'enroll form',
    visit: async (page) => {
      await open(page, '/enroll');
      await page.getByTestId('enroll-code').fill(await registerForEnroll());
      await page.getByTestId('enroll-lookup').click();
      await page.getByTestId('enroll-logger').waitFor();
      await settled(page);
    },
  },
  {
    name: 'enroll done',
    visit: async (page) => {
      await page.getByRole('radiogroup').getByRole('radio').first().click();
      await page.getByTestId('panel-wp').fill('250');
      await page.getByTestId('panel-voc').fill('22.5');
      await page.getByTestId('shunt').fill('2');
      await page.getByTestId('max-current').fill('20');
      await page.getByTestId('enroll-submit').click();
      await page.getByRole('heading', { name: 'Logger enrolled' }).waitFor();
      await settled(page);
    },
  },
  { name: 'releases list', visit: (page) => open(page, '/releases') },
  {
    name: 'release detail',
    visit: (page) => open(page, `/releases/${ids.release}`),
    mainActions: async (page) => ['pause', 'stop', ...(await page.getByTestId('lifecycle-moves').getByRole('button').evaluateAll((els) => els.map((e) => e.getAttribute('data-testid') ?? '')))],
  },
  { name: 'release upload', visit: (page) => open(page, '/releases/new') },
  { name: 'lagging sites', visit: (page) => open(page, '/lagging') },
  { name: 'lagging site', visit: (page) => open(page, `/lagging/${ids.laggingSite}`) },
  { name: 'versions', visit: (page) => open(page, '/fleet/versions') },
  { name: 'sites', visit: (page) => open(page, '/sites') },
  { name: 'site detail', visit: (page) => open(page, `/sites/${ids.site}`) },
  { name: 'models', visit: (page) => open(page, '/models') },
  { name: 'activity', visit: (page) => open(page, '/activity') },
  { name: 'signing keys', visit: (page) => open(page, '/keys') },
  { name: 'API tokens', visit: (page) => open(page, '/tokens') },
  { name: 'team', visit: (page) => open(page, '/team') },
  { name: 'account', visit: (page) => open(page, '/account') },
  { name: 'more', visit: (page) => open(page, '/more') },
  { name: 'mailbox', visit: (page) => open(page, '/mailbox') },
  { name: 'device API settings', visit: (page) => open(page, '/settings/device-api') },
  { name: 'second factor', visit: (page) => open(page, '/second-factor') },
  { name: 'page not found', visit: (page) => open(page, '/no/such/page') },
];

/**
 * Both sizes, unless HELIODOR_A11Y_SIZES names one: a full `npm test` checks the phone size in its browser
 * lane and the wide size in the other lane (scripts/test.js), so the two lanes take about as long.
 */
const sizes = (process.env.HELIODOR_A11Y_SIZES?.split(',') ?? Object.keys(viewports)) as (keyof typeof viewports)[];

describe.each(sizes)('at %s size', (size) => {
  let context: BrowserContext;
  let page: Page;
  beforeAll(async () => {
    context = await browser.newContext({ viewport: viewports[size], bypassCSP: true });
    if (size === 'phone') await context.grantPermissions(['camera'], { origin: app.base });
    page = await context.newPage();
    page.setDefaultTimeout(30_000);
  });
  afterAll(() => context?.close());

  for (const screen of screens) {
    const keyboard = size === 'wide' ? screen.mainActions : undefined;
    const then = [
      'axe-core finds no serious or critical WCAG 2.1 A/AA violation',
      ...(size === 'phone' ? ['every button, link and input is at least 44 × 44 px'] : []),
      ...(keyboard ? ['Tab reaches its main actions and every stop shows a focus ring'] : []),
    ];
    test(`when the ${screen.name} screen is open at ${size} size, then ${then.join(', and ')}`, async () => {
      await screen.visit(page, size);
      const problems = await axeProblems(page, size, screen.name);
      if (size === 'phone') problems.push(...(await smallTargets(page)).map((t) => `target below 44 × 44 px (WCAG 2.5.5): ${t}`));
      if (keyboard) {
        const wanted = await keyboard(page);
        const stops = await tabStops(page);
        problems.push(...wanted.filter((w) => !stops.some((s) => s.name === w)).map((m) => `Tab does not reach "${m}"`));
        problems.push(...stops.filter((s) => !s.ring).map((s) => `no visible focus ring on "${s.name}" (WCAG 2.4.7)`));
      }
      expect(problems).toEqual([]);
    });
  }
});
