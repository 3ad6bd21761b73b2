// Malformed HTTP/1.1 over raw sockets (node:net): what a broken logger, a confused proxy or a
// scanner sends. Every case is written on a connection of its own (pipelined cases carry several
// requests) and whatever comes back is read (sendCase says how long). A closed connection, or 400 / 404 / 405 / 413 / 414 / 415 / 429 / 431 (or another 4xx),
// is fine; a 5xx is not, and afterwards GET /api/health/live must still answer 200.
//
// Shared by tests/api/malformed-requests.test.ts (1 000 cases in `npm test`, against the in-process
// app) and `npm run test:soak` (10 000 cases, against the soak's server process). The cases come from
// a seeded generator, so a failing case is found again by its seed and index.
//
// The rules each family checks, with their source (docs/SOURCES.md §20):
// - bad Content-Length (letters, a sign, two different values, beside Transfer-Encoding): RFC 9112 §6.3
//   rules 3–5 (an invalid Content-Length is unrecoverable: 400 and close; Transfer-Encoding overrides
//   Content-Length and the server must not reuse the connection);
// - truncated body (fewer bytes than Content-Length, then the connection ends): RFC 9112 §8 (an
//   incomplete message);
// - bad chunked coding (size not hex, size overflow, missing CRLF, truncated, last chunk missing):
//   RFC 9112 §7.1; Transfer-Encoding other than chunked last: RFC 9112 §6.3 rule 4 (400 and close);
// - request line (unknown or garbled method, bad version, spaces, bare LF, control bytes, no Host):
//   RFC 9112 §3 and §3.2 (a request without Host is answered 400), §2.2 (bare CR), RFC 9110 §9.1
//   (methods are case-sensitive tokens);
// - request-target with bytes outside its grammar, and percent-encoded bytes that are not UTF-8:
//   RFC 9112 §3.2, RFC 3986 §2.1;
// - header field syntax (space before the colon, obsolete line folding, control bytes, no colon):
//   RFC 9112 §5.1 (whitespace before the colon: 400), §5.2 (obs-fold: 400 or replaced);
// - header floods and oversized fields: RFC 9110 §5.4 (a server may refuse large fields with a 4xx),
//   431 from RFC 6585 §5;
// - invalid UTF-8 inside a JSON body: RFC 8259 §8.1 (JSON exchanged between systems is UTF-8);
// - pipelined garbage after a good request: RFC 9112 §9.3.2 (the first is answered in order).
import net from 'node:net';
import { seededRandom, type Random } from '../../scripts/simulator/random';

export type MalformedTargets = {
  /** A logger token (hlt_…), so device requests get past authentication to the body and schema. */
  token?: string;
  /** A session cookie (name=value), so console requests get past the guard. */
  cookie?: string;
  /** Ids that exist (a logger, a site, a release), so routes with an id reach the database. */
  ids?: string[];
};

export type MalformedCase = { family: string; bytes: Buffer };

const CRLF = '\r\n';
const pick = <T>(random: Random, list: readonly T[]): T => list[Math.floor(random() * list.length)];
const int = (random: Random, max: number) => Math.floor(random() * max);

const UUID_LIKE = ['00000000-0000-0000-0000-000000000000', 'ffffffff-ffff-ffff-ffff-ffffffffffff', 'not-a-uuid', '%FF%FE', "1'--"];

function paths(t: MalformedTargets): string[] {
  const ids = [...(t.ids ?? []), ...UUID_LIKE];
  return [
    '/api/device/v1/check-in',
    '/api/device/v1/images/' + 'a'.repeat(64),
    '/api/auth/sign-in',
    '/api/enrollments',
    '/api/sites',
    '/api/models',
    '/api/releases',
    '/api/loggers/batch',
    '/api/loggers',
    '/api/health/live',
    '/api/health/ready',
    '/metrics',
    '/',
    '/fleet',
    ...ids.flatMap((id) => [`/api/loggers/${id}`, `/api/sites/${id}`, `/api/releases/${id}`, `/api/releases/${id}/transitions`]),
  ];
}

/** Headers a real client would send: Host, and now and then the logger token or the session cookie. */
function credentials(random: Random, t: MalformedTargets): string {
  let h = '';
  if (t.token && random() < 0.5) h += `Authorization: Bearer ${t.token}${CRLF}`;
  if (t.cookie && random() < 0.5) h += `Cookie: ${t.cookie}${CRLF}X-Requested-With: heliodor${CRLF}`;
  return h;
}

/** Bodies that are almost JSON, or JSON with bytes that are not UTF-8 (RFC 8259 §8.1). */
function badJson(random: Random): Buffer {
  const invalid = [Buffer.from([0xff]), Buffer.from([0xc0, 0xaf]), Buffer.from([0xed, 0xa0, 0x80]), Buffer.from([0xf8, 0x88, 0x80, 0x80, 0x80]), Buffer.from([0xe2, 0x82])];
  const bad = pick(random, invalid);
  const shapes: (() => Buffer)[] = [
    () => Buffer.concat([Buffer.from('{"firmware":"2.2.'), bad, Buffer.from('","board":"B","security_counter":0}')]),
    () => Buffer.concat([Buffer.from('{"email":"'), bad, Buffer.from('@fernhollow.example","password":"x"}')]),
    () => Buffer.concat([Buffer.from('{"'), bad, Buffer.from('":1}')]),
    () => Buffer.concat([Buffer.from('{"name":"Aldmere '), bad, Buffer.from(' Hall","latitude":52.1,"longitude":-2}')]),
    () => Buffer.concat([Buffer.from('{"firmware":"2.2.0","board":"B","security_counter":0,"report":{"release":"'), bad, Buffer.from('","state":"failed","detail":"'), bad, Buffer.from('"}}')]),
    () => Buffer.from('{"firmware":"2.2.0","board":"B\\u0000","security_counter":0,"readings":{"bus_v":1e999}}'),
    () => Buffer.from('{"a":'.repeat(2000)),
    () => Buffer.from('[' + '1,'.repeat(5000) + ']'),
    () => Buffer.from('{"firmware":"2.2.0","board":"B","security_counter":9007199254740993,"uptime_s":-1}'),
    () => Buffer.from('\ufeff{"firmware":"2.2.0"}'),
    () => Buffer.from('{"token":"hlt_' + 'A'.repeat(43) + '","siteId":"\\ud800","panelWp":"NaN"}'),
    () => Buffer.from(`{"name":"${'é'.repeat(5000)}"}`),
  ];
  return pick(random, shapes)();
}

type Gen = (random: Random, t: MalformedTargets) => Buffer;

const request = (line: string, headers: string, body: Buffer | string = '') => Buffer.concat([Buffer.from(`${line}${CRLF}${headers}${CRLF}`, 'latin1'), typeof body === 'string' ? Buffer.from(body, 'latin1') : body]);

/** The families of malformed requests, each a generator of one case. */
export const FAMILIES: Record<string, Gen> = {
  // RFC 9112 §6.3 rule 5: a Content-Length that is not a valid number.
  'bad Content-Length': (r, t) => {
    const cl = pick(r, ['abc', '-1', '1.5', '0x10', '+5', '5 5', '99999999999999999999999', '', ' ', '1e3', '٣']);
    return request(`POST ${pick(r, paths(t))} HTTP/1.1`, `Host: heliodor${CRLF}Content-Type: application/json${CRLF}${credentials(r, t)}Content-Length: ${cl}${CRLF}`, '{}');
  },
  // RFC 9112 §6.3 rule 5: differing Content-Length values.
  'two Content-Lengths': (r, t) =>
    request(`POST ${pick(r, paths(t))} HTTP/1.1`, `Host: heliodor${CRLF}Content-Type: application/json${CRLF}${credentials(r, t)}Content-Length: 2${CRLF}Content-Length: ${2 + int(r, 9) + 1}${CRLF}`, '{}{"x":1}'),
  // RFC 9112 §6.1 and §6.3 rule 3: Transfer-Encoding and Content-Length together (a smuggling shape).
  'Transfer-Encoding with Content-Length': (r, t) =>
    request(`POST ${pick(r, paths(t))} HTTP/1.1`, `Host: heliodor${CRLF}Content-Type: application/json${CRLF}Content-Length: 4${CRLF}Transfer-Encoding: chunked${CRLF}${credentials(r, t)}`, `0${CRLF}${CRLF}GET /api/health/live HTTP/1.1${CRLF}Host: x${CRLF}${CRLF}`),
  // RFC 9112 §8: fewer bytes than announced, then the connection ends.
  'truncated body': (r, t) => {
    const body = badJson(r);
    return request(`POST ${pick(r, paths(t))} HTTP/1.1`, `Host: heliodor${CRLF}Content-Type: application/json${CRLF}${credentials(r, t)}Content-Length: ${body.length + 1 + int(r, 10_000)}${CRLF}`, body.subarray(0, int(r, body.length)));
  },
  // RFC 9112 §7.1: chunk-size must be hex digits, each chunk ends in CRLF, a last chunk of size 0 ends the body.
  'bad chunked coding': (r, t) => {
    const body = pick(r, [
      `zz${CRLF}{}${CRLF}0${CRLF}${CRLF}`,
      `ffffffffffffffffffff${CRLF}{}${CRLF}`,
      `2${CRLF}{}0${CRLF}${CRLF}`,
      `5${CRLF}{}${CRLF}0${CRLF}${CRLF}`,
      `2;${'x'.repeat(20_000)}${CRLF}{}${CRLF}0${CRLF}${CRLF}`,
      `2${CRLF}{}${CRLF}`,
      `-2${CRLF}{}${CRLF}0${CRLF}${CRLF}`,
      `2\n{}\n0\n\n`,
      `0${CRLF}Trailer-Field: ${'y'.repeat(100_000)}${CRLF}${CRLF}`,
      ` 2${CRLF}{}${CRLF}0${CRLF}${CRLF}`,
    ]);
    const te = pick(r, ['chunked', 'chunked, gzip', 'gzip', 'chunked, chunked', 'identity', 'chunked\u000b', 'CHUNKED']);
    return request(`POST ${pick(r, paths(t))} HTTP/1.1`, `Host: heliodor${CRLF}Content-Type: application/json${CRLF}${credentials(r, t)}Transfer-Encoding: ${te}${CRLF}`, body);
  },
  // RFC 9112 §3, RFC 9110 §9.1: the method is a case-sensitive token; the request line has three parts.
  'bad method or request line': (r, t) => {
    const p = pick(r, paths(t));
    const line = pick(r, [
      `FOO ${p} HTTP/1.1`, `get ${p} HTTP/1.1`, `G\u0000ET ${p} HTTP/1.1`, `GET  ${p} HTTP/1.1`, `${p} HTTP/1.1`, `GET ${p}`, `GET ${p} HTTP/9.9`,
      `GET ${p} HTTP/1.1 extra`, `GET ${p} HTTP/1.1\r`, `\u0001\u0002\u0003`, `PROPFIND ${p} HTTP/1.1`, `CONNECT ${p} HTTP/1.1`, `TRACE ${p} HTTP/1.1`,
      `DELETE ${p} HTTP/1.1`, `PATCH ${p} HTTP/1.1`, `GET ${p} HTTP/1.0`, `GET ${p} http/1.1`, `GET ${p}\tHTTP/1.1`, `${'A'.repeat(70_000)} / HTTP/1.1`,
    ]);
    return request(line, `Host: heliodor${CRLF}${credentials(r, t)}`);
  },
  // RFC 9112 §3.2: an HTTP/1.1 request without Host (or with two) is answered 400.
  'Host missing or doubled': (r, t) =>
    request(`GET ${pick(r, paths(t))} HTTP/1.1`, r() < 0.5 ? credentials(r, t) : `Host: a${CRLF}Host: b${CRLF}${credentials(r, t)}`),
  // RFC 9112 §3.2, RFC 3986 §2.1: bytes outside the request-target grammar, and percent-encodings that are not UTF-8.
  'invalid bytes in the path': (r, t) => {
    const p = pick(r, paths(t));
    const bad = pick(r, ['\u00ff', '\u0080\u00ff', '%FF', '%C0%AF', '%ED%A0%80', '%', '%zz', '%00', '\u0000', '\u007f', ' ', '..%2F..%2Fetc', '%E2%82', '\u00c3(']);
    const target = pick(r, [`${p}${bad}`, `${p}/${bad}`, `${p}?q=${bad}`, `/api/loggers/${bad}`, `/api/device/v1/images/${bad}`, `/${bad}`, `*`, `http://heliodor${p}`, `//${bad}`]);
    return request(`${pick(r, ['GET', 'POST', 'PATCH'])} ${target} HTTP/1.1`, `Host: heliodor${CRLF}Content-Type: application/json${CRLF}${credentials(r, t)}Content-Length: 2${CRLF}`, '{}');
  },
  // RFC 9112 §5.1 (no whitespace before the colon), §5.2 (obs-fold), §2.2 (bare CR); field values without control bytes.
  'bad header syntax': (r, t) => {
    const h = pick(r, [
      `Content-Type : application/json${CRLF}`, `X-Folded: a${CRLF} b${CRLF}`, `X-Bad: a\rb${CRLF}`, `X-Nul: a\u0000b${CRLF}`, `NoColon${CRLF}`,
      `: empty-name${CRLF}`, `X\u00ff: latin${CRLF}`, `X-Bare-LF: a\nX-Other: b${CRLF}`, `Content-Type: application/json; charset=latin-99${CRLF}`,
      `Content-Type: application/json; charset=utf-16${CRLF}`, `Content-Encoding: gzip${CRLF}`, `Content-Encoding: br, deflate${CRLF}`, `Expect: 100-banana${CRLF}`,
      `Authorization: Bearer hlt_${'\u00ff'.repeat(43)}${CRLF}`, `Authorization: Bearer${CRLF}`, `Cookie: heliodor_session=${'x'.repeat(3000)}${CRLF}`,
      `Range: bytes=9999999999999999999-${CRLF}`, `Range: bytes=-0,-0,-0,-0,-0,-0,-0,-0,-0,-0,-0,-0,-0,-0,-0,-0,-0${CRLF}`, `If-Range: "x${CRLF}`,
    ]);
    return request(`${pick(r, ['GET', 'POST'])} ${pick(r, paths(t))} HTTP/1.1`, `Host: heliodor${CRLF}${credentials(r, t)}${h}Content-Length: 2${CRLF}`, '{}');
  },
  // RFC 9110 §5.4 and RFC 6585 §5: a server may refuse too many or too large header fields (431).
  'header flood': (r, t) => {
    const n = 100 + int(r, 5000);
    let h = '';
    for (let i = 0; i < n; i++) h += `X-Flood-${i}: ${'v'.repeat(int(r, 20))}${CRLF}`;
    return request(`GET ${pick(r, paths(t))} HTTP/1.1`, `Host: heliodor${CRLF}${credentials(r, t)}${h}`);
  },
  'oversized header': (r, t) => {
    const size = pick(r, [16 * 1024, 64 * 1024, 200 * 1024]);
    const name = pick(r, ['X-Big', 'Cookie', 'Authorization', 'Content-Type', 'User-Agent', 'Y'.repeat(size)]);
    return request(`GET ${pick(r, paths(t))} HTTP/1.1`, `Host: heliodor${CRLF}${name}: ${'z'.repeat(size)}${CRLF}`);
  },
  // RFC 8259 §8.1: JSON between systems is UTF-8; bodies that are not, or not JSON at all.
  'invalid JSON body': (r, t) => {
    const body = badJson(r);
    const type = pick(r, ['application/json', 'application/json; charset=utf-8', 'application/problem+json', 'text/plain', 'application/x-www-form-urlencoded', 'multipart/form-data; boundary=x', 'multipart/form-data']);
    return request(`${pick(r, ['POST', 'PATCH', 'PUT'])} ${pick(r, paths(t))} HTTP/1.1`, `Host: heliodor${CRLF}Content-Type: ${type}${CRLF}${credentials(r, t)}Content-Length: ${body.length}${CRLF}`, body);
  },
  // RFC 9112 §9.3.2: a good request, then garbage on the same connection.
  'pipelined garbage': (r, t) => {
    const good = request(`GET /api/health/live HTTP/1.1`, `Host: heliodor${CRLF}`);
    const garbage = pick(r, [Buffer.from([0x16, 0x03, 0x01, 0x02, 0x00, 0x01]), Buffer.from('\r\n\r\n\r\n'), Buffer.from(`GET / HTTP/1.1${CRLF}Host: h${CRLF}Content-Length: x${CRLF}${CRLF}`), FAMILIES['bad chunked coding'](r, t), Buffer.from('PRI * HTTP/2.0\r\n\r\nSM\r\n\r\n'), Buffer.alloc(4096, 0)]);
    return Buffer.concat([good, garbage, good]);
  },
};

/** `count` cases, the families taken in turn, each made by the seeded generator. */
export function malformedCases(count: number, seed: number, targets: MalformedTargets): MalformedCase[] {
  const random = seededRandom(seed);
  const names = Object.keys(FAMILIES);
  return Array.from({ length: count }, (_, i) => ({ family: names[i % names.length], bytes: FAMILIES[names[i % names.length]](random, targets) }));
}

export type CaseOutcome = { family: string; statuses: number[]; closed: boolean; timedOut: boolean };


/**
 * Status codes of the responses in what came back: each response starts with an HTTP/1.x status line
 * (RFC 9112 §4); a response may follow the previous body directly, so the line is found anywhere.
 */
export function statusesIn(received: Buffer): number[] {
  const text = received.toString('latin1');
  return [...text.matchAll(/HTTP\/1\.[01] (\d{3}) /g)].map((m) => Number(m[1]));
}

/**
 * Sends one case on a connection of its own and reads what comes back. The connection is left open
 * (a client that closes its side at once would have the server drop its answer): once the answers
 * stop for `idleMs` the client closes; when nothing comes for `silentMs` (a truncated body, an
 * unfinished header) the client closes its side, as a logger losing its link would, and reads
 * until the server closes. A connection still open `timeoutMs` after that is cut and counted.
 */
export function sendCase(host: string, port: number, c: MalformedCase, { idleMs = 500, silentMs = 2_000, timeoutMs = 10_000 } = {}): Promise<CaseOutcome> {
  return new Promise((resolve) => {
    const chunks: Buffer[] = [];
    let timedOut = false;
    let closedByServer = true;
    const socket = net.connect({ host, port });
    let timer: NodeJS.Timeout | null = null;
    const after = (ms: number, then: () => void) => {
      if (timer) clearTimeout(timer);
      timer = setTimeout(then, ms);
    };
    const hangUp = () => {
      closedByServer = false;
      socket.destroy();
    };
    const giveUp = () => {
      timedOut = true;
      hangUp();
    };
    socket.on('data', (d) => {
      chunks.push(d);
      after(idleMs, hangUp);
    });
    socket.on('error', () => undefined); // a reset is a closed connection, which is fine
    socket.on('close', () => {
      if (timer) clearTimeout(timer);
      resolve({ family: c.family, statuses: statusesIn(Buffer.concat(chunks)), closed: closedByServer, timedOut });
    });
    socket.on('connect', () => {
      socket.write(c.bytes, () => undefined);
      after(silentMs, () => {
        socket.end();
        after(timeoutMs, giveUp);
      });
    });
  });
}

export type MalformedResult = {
  sent: number;
  byFamily: Record<string, { sent: number; statuses: Record<string, number>; closedWithoutAnswer: number }>;
  fiveHundreds: { family: string; status: number; index: number }[];
  timedOut: number;
  healthAfter: number;
  problems: string[];
};

/** Sends every case, `concurrency` connections at a time, then asks GET /api/health/live. */
export async function sendMalformed(base: string, cases: MalformedCase[], concurrency = 32): Promise<MalformedResult> {
  const { hostname, port } = new URL(base);
  const result: MalformedResult = { sent: 0, byFamily: {}, fiveHundreds: [], timedOut: 0, healthAfter: 0, problems: [] };
  let next = 0;
  const worker = async () => {
    while (next < cases.length) {
      const index = next++;
      const c = cases[index];
      const outcome = await sendCase(hostname, Number(port), c);
      result.sent += 1;
      const f = (result.byFamily[c.family] ??= { sent: 0, statuses: {}, closedWithoutAnswer: 0 });
      f.sent += 1;
      if (outcome.statuses.length === 0) f.closedWithoutAnswer += 1;
      for (const s of outcome.statuses) {
        f.statuses[s] = (f.statuses[s] ?? 0) + 1;
        if (s >= 500) result.fiveHundreds.push({ family: c.family, status: s, index });
      }
      if (outcome.timedOut) result.timedOut += 1;
    }
  };
  await Promise.all(Array.from({ length: concurrency }, worker));
  result.healthAfter = await fetch(`${base}/api/health/live`).then((r) => r.status, () => 0);
  if (result.fiveHundreds.length) {
    const first = result.fiveHundreds.slice(0, 5).map((f) => `${f.status} for case ${f.index} (${f.family})`).join('; ');
    result.problems.push(`${result.fiveHundreds.length} malformed requests were answered with a 5xx: ${first}`);
  }
  if (result.healthAfter !== 200) result.problems.push(`GET /api/health/live answered ${result.healthAfter || 'nothing'} afterwards`);
  return result;
}

export function malformedSummary(r: MalformedResult & { seed?: number }): string {
  const lines = [
    '',
    `Malformed requests: ${r.sent.toLocaleString('en-GB')} over raw sockets${r.seed !== undefined ? ` (seed ${r.seed})` : ''}; 5xx answers: ${r.fiveHundreds.length}; /api/health/live afterwards: ${r.healthAfter}`,
    ...Object.entries(r.byFamily).map(([family, f]) => {
      const statuses = Object.entries(f.statuses).map(([s, n]) => `${s} × ${n}`).join(', ');
      return `  ${family.padEnd(40)}${String(f.sent).padStart(6)} sent · ${statuses || 'no status line'}${f.closedWithoutAnswer ? ` · closed without an answer × ${f.closedWithoutAnswer}` : ''}`;
    }),
    ...(r.timedOut ? [`  ${r.timedOut} connections were still open after 10 s and were closed by the client`] : []),
    ...r.problems.map((p) => `  PROBLEM: ${p}`),
    '',
  ];
  return lines.join('\n');
}
