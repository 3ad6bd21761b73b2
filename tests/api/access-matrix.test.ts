// The access table, proven: every route of server/auth/access.ts is called by every kind of caller, and
// each answer is checked against what the table promises — one generated case per (route × caller),
// so a new route is covered the moment it has its row. A request that passes the guard may still be
// refused by the handler for its empty body or unknown id (400, 404, 409, 410); the table promises
// only the guard's verdict, and the guard's refusals carry problem types of their own.
import crypto from 'node:crypto';
import request from 'supertest';
import { access, type Rule } from '../../server/auth/access';
import type { Scope } from '../../server/auth/actor';
import { createSession } from '../../server/auth/store';
import { sessionTtlSeconds, signSession, sessionCookie, pendingSessionTtlSeconds } from '../../server/auth/session';
import { createToken } from '../../server/tokens/service';
import { systemContext } from '../../server/auth/actor';
import { User } from '../../server/db/models';
import { roles, type Role } from '../../schemas/auth';
import { tokenScopes } from '../../schemas/tokens';
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { createFleet } from './device-fixtures';

type Caller =
  | { kind: 'anonymous' }
  | { kind: 'person'; role: Role }
  | { kind: 'second-factor-setup'; role: 'release_engineer' } // production: must set up a second factor first
  | { kind: 'second-factor-pending'; role: 'admin' } // password given, code not yet
  | { kind: 'token'; scope: Scope }
  | { kind: 'logger' };

const callers: Caller[] = [
  { kind: 'anonymous' },
  ...roles.map((role): Caller => ({ kind: 'person', role })),
  { kind: 'second-factor-setup', role: 'release_engineer' },
  { kind: 'second-factor-pending', role: 'admin' },
  ...tokenScopes.map((scope): Caller => ({ kind: 'token', scope })),
  { kind: 'logger' },
];

const callerName = (c: Caller) =>
  c.kind === 'person' ? c.role : c.kind === 'token' ? `API token ${c.scope}` : c.kind === 'anonymous' || c.kind === 'logger' ? c.kind : `${c.role} (${c.kind})`;

type Verdict = { pass: true } | { pass: false; status: 401 | 403; guardType?: string };
const guardTypes = { signIn: /\/problems\/sign-in-required$/, role: /\/problems\/not-allowed$/, setup: /\/problems\/second-factor-setup-required$/ };

/** What the table promises this caller on this route. */
function promised(rule: Rule, c: Caller): Verdict {
  if (rule.kind === 'public') return { pass: true };
  // Device routes take a logger's own token and nothing else; the device API checks it.
  if (rule.kind === 'device') return c.kind === 'logger' ? { pass: true } : { pass: false, status: 401 };
  if (c.kind === 'anonymous' || c.kind === 'logger' || c.kind === 'second-factor-pending') return { pass: false, status: 401, guardType: 'signIn' };
  if (c.kind === 'token') return rule.scopes?.includes(c.scope) ? { pass: true } : { pass: false, status: 403, guardType: 'role' };
  if (!rule.roles.includes(c.role)) return { pass: false, status: 403, guardType: 'role' };
  if (c.kind === 'second-factor-setup' && !rule.beforeSecondFactor) return { pass: false, status: 403, guardType: 'setup' };
  return { pass: true };
}

/** A concrete path: ids become fresh UUIDs, image names a SHA-256 that names nothing. */
const concrete = (path: string) =>
  path.replace(/:([A-Za-z0-9_]+)/g, (_, name: string) => (name === 'sha256' ? crypto.randomBytes(32).toString('hex') : crypto.randomUUID()));

// Every route has its row (tests/api/foundation.test.ts walks the router for that); importing the app
// above declared every domain's rows, so the table is complete here.
const rows = Object.entries(access).sort(([a], [b]) => a.localeCompare(b));
const cells = rows.flatMap(([route, rule]) => callers.map((caller) => ({ route, rule, caller })));

let t: TestApp;
const people: Partial<Record<string, User>> = {};
const bearer: Partial<Record<string, string>> = {};

beforeAll(async () => {
  // Production rules, so the caller who must first set up a second factor exists; the admin and the
  // release engineer callers have one.
  t = await startTestApp({ seed: 'none', config: { production: true, publicUrl: 'http://127.0.0.1:9', devMailbox: true } });
  for (const c of callers) {
    if (c.kind === 'person' || c.kind === 'second-factor-setup' || c.kind === 'second-factor-pending') {
      const name = `Matrix ${callerName(c)}`;
      const hasSecondFactor = c.kind !== 'second-factor-setup' && (c.role === 'admin' || c.role === 'release_engineer');
      people[callerName(c)] = await User.create({
        email: `${crypto.randomUUID()}@test.example`,
        name,
        role: c.role,
        passwordHash: '$2b$10$' + 'x'.repeat(53),
        totpEnabledAt: hasSecondFactor ? new Date() : null,
      });
    }
    if (c.kind === 'token') {
      const created = await createToken(t.sequelize, systemContext(), { name: `matrix ${c.scope}`, scopes: [c.scope], expiresAt: new Date(Date.now() + 86_400_000).toISOString() }, new Date());
      bearer[callerName(c)] = created.token;
    }
  }
  const fleet = await createFleet(t);
  bearer.logger = (await fleet.logger()).token;
});
afterAll(() => t.close());

/** The caller's credentials for one request: a fresh session each time, so a sign-out in one cell cannot spoil another. */
async function credentials(c: Caller): Promise<Record<string, string>> {
  if (c.kind === 'anonymous') return {};
  if (c.kind === 'token' || c.kind === 'logger') return { Authorization: `Bearer ${bearer[callerName(c)]}` };
  const person = people[callerName(c)]!;
  const stage = c.kind === 'second-factor-pending' ? 'second_factor' : 'full';
  const session = await createSession(t.sequelize, person.id, stage, new Date(), stage === 'full' ? sessionTtlSeconds : pendingSessionTtlSeconds);
  return { Cookie: `${sessionCookie}=${signSession(t.app.services.config.jwtSecret, person.id, session.id, session.expiresAt)}`, ...csrf };
}

test('when the router is walked, then the matrix covers exactly its routes', () => {
  const stack = (t.app.apiRouter as unknown as { stack: { route?: { path: string; methods: Record<string, boolean> } }[] }).stack;
  const routes = stack.filter((l) => l.route).flatMap((l) => Object.keys(l.route!.methods).map((m) => `${m.toUpperCase()} ${l.route!.path}`));
  expect([...new Set(routes)].sort()).toEqual(rows.map(([r]) => r).sort());
  expect(cells).toHaveLength(rows.length * callers.length);
});

describe.each(rows.map(([route, rule]) => [route, rule] as const))('%s', (route, rule) => {
  test.each(callers.map((c) => [callerName(c), c] as const))('when called as %s, then the answer is what the access table promises', async (_name, caller) => {
    const [method, path] = route.split(' ');
    const verdict = promised(rule, caller);
    let req = request(t.app)[method.toLowerCase() as 'get' | 'post' | 'patch' | 'put' | 'delete'](concrete(path));
    for (const [k, v] of Object.entries(await credentials(caller))) req = req.set(k, v);
    const res = method === 'GET' ? await req : await req.send({});
    const seen = `${route} as ${callerName(caller)} → ${res.status} ${res.body?.type ?? ''}`;
    expect({ seen, serverError: res.status >= 500 }).toEqual({ seen, serverError: false });
    if (verdict.pass) {
      expect({ seen, refused: res.status === 401 || res.status === 403 }).toEqual({ seen, refused: false });
    } else {
      expect({ seen, status: res.status }).toEqual({ seen, status: verdict.status });
      if (verdict.guardType) expect(res.body.type).toMatch(guardTypes[verdict.guardType as keyof typeof guardTypes]);
    }
  });
});
