// Malformed HTTP/1.1 over raw sockets (node:net) against the in-process app listening on loopback:
// 1 000 cases from tests/soak/malformed.ts (`npm run test:soak` sends the full 10 000 to its server
// process). The rules each family checks are listed there with their RFC 9110 / RFC 9112 sections
// (docs/SOURCES.md §20);
// the verdict here is the one every family shares: a malformed request may be refused (4xx: 400,
// 413, 414, 431, …) or have its connection closed, never answered with a 5xx (RFC 9110 §15.6: 5xx
// means the server failed, and a malformed request is the client's fault, §15.5.1), and the server
// still answers GET /api/health/live afterwards.
import fs from 'node:fs';
import path from 'node:path';
import { listeningApp, testPassword } from '../helpers/app';
import { readBenchSheet } from '../../scripts/simulator/fleet';
import { FAMILIES, malformedCases, malformedSummary, sendCase, sendMalformed, statusesIn } from '../soak/malformed';

const app = listeningApp({ seed: 'demo' });
const SEED = 20261202;
const COUNT = 1000;

async function targets() {
  const bench = readBenchSheet(fs.readFileSync(path.join(app.t.dataDir, 'demo', 'bench-sheet.csv'), 'utf8'));
  const signIn = await fetch(`${app.base}/api/auth/sign-in`, {
    method: 'POST',
    headers: { 'Content-Type': 'application/json', 'X-Requested-With': 'heliodor' },
    body: JSON.stringify({ email: 'morgan@fernhollow.example', password: testPassword }),
  });
  expect(signIn.status).toBe(200);
  const cookie = signIn.headers.getSetCookie().map((c) => c.split(';')[0]).join('; ');
  const sites = (await (await fetch(`${app.base}/api/sites`, { headers: { Cookie: cookie } })).json()) as { rows: { id: string }[] };
  return { token: bench[0].token, cookie, ids: [sites.rows[0].id] };
}

describe('malformed requests over raw sockets', () => {
  test('when a well-formed request is sent the same way, then it is answered 200 (the client reads answers correctly)', async () => {
    const { hostname, port } = new URL(app.base);
    const outcome = await sendCase(hostname, Number(port), { family: 'control', bytes: Buffer.from('GET /api/health/live HTTP/1.1\r\nHost: heliodor\r\n\r\n') });
    expect(outcome.statuses).toEqual([200]);
  });

  test('when two responses follow each other on one connection, then both status lines are read (RFC 9112 §4)', () => {
    const two = Buffer.from('HTTP/1.1 200 OK\r\nContent-Length: 2\r\n\r\n{}HTTP/1.1 400 Bad Request\r\nConnection: close\r\n\r\n');
    expect(statusesIn(two)).toEqual([200, 400]);
  });

  test(`when ${COUNT} malformed requests of every family arrive, then none is answered with a 5xx and /api/health/live still answers 200`, async () => {
    const cases = malformedCases(COUNT, SEED, await targets());
    expect(new Set(cases.map((c) => c.family))).toEqual(new Set(Object.keys(FAMILIES)));
    const result = await sendMalformed(app.base, cases, 48);
    process.stdout.write(malformedSummary({ ...result, seed: SEED }));
    expect(result.sent).toBe(COUNT);
    expect(result.fiveHundreds).toEqual([]);
    expect(result.healthAfter).toBe(200);
  });

  test('when an HTTP/1.1 request has no Host, then it is answered 400 (RFC 9112 §3.2)', async () => {
    const { hostname, port } = new URL(app.base);
    const outcome = await sendCase(hostname, Number(port), { family: 'no Host', bytes: Buffer.from('GET /api/health/live HTTP/1.1\r\n\r\n') });
    expect(outcome.statuses).toEqual([400]);
  });

  test('when a request has whitespace between a field name and the colon, then it is answered 400 (RFC 9112 §5.1)', async () => {
    const { hostname, port } = new URL(app.base);
    const outcome = await sendCase(hostname, Number(port), { family: 'space before colon', bytes: Buffer.from('GET /api/health/live HTTP/1.1\r\nHost : heliodor\r\n\r\n') });
    expect(outcome.statuses).toEqual([400]);
  });

  test('when Content-Length is not a number, then it is answered 400 and the connection closed (RFC 9112 §6.3 rule 5)', async () => {
    const { hostname, port } = new URL(app.base);
    const outcome = await sendCase(hostname, Number(port), {
      family: 'bad Content-Length',
      bytes: Buffer.from('POST /api/device/v1/check-in HTTP/1.1\r\nHost: heliodor\r\nContent-Type: application/json\r\nContent-Length: 1x\r\n\r\n{}'),
    });
    expect(outcome).toMatchObject({ statuses: [400], closed: true });
  });

  test('when a path holds a percent-encoding that is not UTF-8, then it is answered 400 problem+json (RFC 3986 §2.1, RFC 9457)', async () => {
    const res = await fetch(`${app.base}/api/releases/%C0%AF`);
    expect(res.status).toBe(400);
    expect(res.headers.get('content-type')).toMatch(/^application\/problem\+json/);
    const spa = await fetch(`${app.base}/%zz`);
    expect(spa.status).toBe(400);
  });
});
