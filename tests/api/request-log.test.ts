// The request log keeps no credential: a logger label's link (`/enroll?t=hlt_…`), an automation token
// (`hat_…`) and the session cookie never reach a log line, whichever way a request carries them — in
// the path, the query, a header (Authorization, Cookie, Referer) — and in either log format. Rule:
// docs/PRODUCT.md "Secrets" (tokens are shown once) and RFC 9110 §17.9 ("Disclosure of Sensitive
// Information in URIs": URIs end up in logs, so secrets do not belong there).
import { Writable } from 'node:stream';
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { createLogger } from '../../server/logging';
import { demoAgent, demoModelId, siteIdNamed } from './registry-helpers';

function capture() {
  const chunks: string[] = [];
  const stream = new Writable({
    write(chunk, _encoding, callback) {
      chunks.push(String(chunk));
      callback();
    },
  });
  return { text: () => chunks.join(''), stream };
}

/** Anything that reads like one of Heliodor's tokens: a prefix, an underscore and token characters. */
const tokenLike = /\b(hlt|hat)_[A-Za-z0-9_-]{8,}/;

describe.each(['json', 'pretty'] as const)('the request log (%s)', (format) => {
  const log = capture();
  let t: TestApp;
  beforeAll(async () => {
    // Debug level: outside production every request line is written at debug (server/logging.ts).
    t = await startTestApp({ seed: 'demo', logger: createLogger({ level: 'debug', format }, log.stream) });
  });
  afterAll(() => t.close());

  test('when a label is scanned and the logger enrolled, then no log line holds its token, the session cookie or an API token', async () => {
    const morgan = await demoAgent(t, 'Morgan');
    const registered = await morgan.agent.post('/api/loggers').set(csrf).send({ serial: `FL2-LOG${format === 'json' ? 1 : 2}`, modelId: await demoModelId(), board: 'B' });
    expect(registered.status).toBe(201);
    const token = registered.body.token as string;
    expect(token).toMatch(/^hlt_/);
    const apiToken = await morgan.agent.post('/api/tokens').set(csrf).send({ name: `log check ${format}`, scopes: ['fleet:read'], expiresAt: '2099-01-01T00:00:00Z' });
    expect(apiToken.status).toBe(201);
    const hat = apiToken.body.token as string;
    expect(hat).toMatch(/^hat_/);

    // The phone opens the label's link, then the console looks the token up and enrolls.
    const link = `/enroll?t=${encodeURIComponent(token)}`;
    await t.request().get(link).set('Referer', `http://127.0.0.1${link}`);
    const tomasz = await demoAgent(t, 'Tomasz');
    const lookup = await tomasz.agent.post('/api/enrollments/lookup').set(csrf).set('Referer', `http://127.0.0.1${link}`).send({ token });
    expect(lookup.status).toBe(200);
    const enrolled = await tomasz.agent.post('/api/enrollments').set(csrf).send({
      token, siteId: await siteIdNamed('Aldmere Village Hall'), panelWp: 400, panelVocV: 22.4, shuntOhm: 0.002, maxCurrentA: 10, tempResolutionBits: 12,
    });
    expect(enrolled.status).toBe(201);
    // The logger checks in with its token; automation reads the fleet with its own; a stray link carries both in the query and the path.
    await t.request().post('/api/device/v1/check-in').set('Authorization', `Bearer ${token}`).send({});
    await t.request().get('/api/loggers').set('Authorization', `Bearer ${hat}`);
    await t.request().get(`/api/nowhere/${token}?token=${hat}&invitation=abcdef0123456789&reset=fedcba9876543210`);

    const text = log.text();
    // The requests were logged (the check would pass trivially on an empty log).
    expect(text).toMatch(/\/enroll/);
    expect(text).toMatch(/\/api\/enrollments\/lookup/);
    expect(text).toMatch(/\/api\/nowhere/);
    expect(text).not.toContain(token);
    expect(text).not.toContain(token.slice(4));
    expect(text).not.toContain(hat);
    expect(text).not.toContain(hat.slice(4));
    expect(text).not.toMatch(tokenLike);
    expect(text).not.toContain('abcdef0123456789');
    expect(text).not.toContain('fedcba9876543210');
    expect(text).not.toMatch(/heliodor_session=[A-Za-z0-9]/);
  });
});
