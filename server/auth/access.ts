// Who may call what: one row per (method, route). The API refuses to register a route that has
// no row here; tests/api/foundation.test.ts walks the router to prove every route has its row, and
// tests/api/access-matrix.test.ts calls every route as every kind of caller and checks the row's verdict.
import type { Role } from '../../schemas/auth';
import type { Scope } from './actor';

export type Rule =
  | { kind: 'public' }
  | { kind: 'device' } // a logger's own bearer token; checked by the device API itself
  | {
      kind: 'people';
      roles: readonly Role[];
      scopes?: readonly Scope[];
      /** Open to a person who must set up a second factor before anything else (production rule for admins and release engineers). */
      beforeSecondFactor?: boolean;
    };

const everyone: readonly Role[] = ['admin', 'release_engineer', 'integrator', 'support'];
const publicRule: Rule = { kind: 'public' };
const device: Rule = { kind: 'device' };
const people = (roles: readonly Role[], scopes?: readonly Scope[]): Rule => ({ kind: 'people', roles, scopes });
/** Rows a person who still has to set up a second factor may use: their session, and setting it up. */
const ownAccountFirst = (): Rule => ({ kind: 'people', roles: everyone, beforeSecondFactor: true });

export const access: Record<string, Rule> = {
  // Foundation
  'GET /api/health': publicRule,
  // Operations: liveness and readiness for supervisors and load balancers; metrics for an admin or a scraper's token.
  'GET /api/health/live': publicRule,
  'GET /api/health/ready': publicRule,
  'GET /metrics': people(['admin'], ['metrics:read']),
  'POST /api/auth/sign-in': publicRule,
  'POST /api/auth/sign-out': publicRule,
  'GET /api/auth/me': ownAccountFirst(),
  'GET /api/overview': people(everyone),
  'GET /api/activity': people(['admin', 'release_engineer', 'support']),
  'GET /api/dev/outbox': people(['admin']),
  'GET /api/users': people(['admin', 'release_engineer', 'support', 'integrator']),
  // Registry: models, sites, loggers, enrollment
  'GET /api/models': people(everyone),
  'GET /api/models/:id': people(everyone),
  'POST /api/models': people(['admin']),
  'PATCH /api/models/:id': people(['admin']),
  'GET /api/sites': people(everyone),
  'GET /api/sites/:id': people(everyone),
  'POST /api/sites': people(['admin', 'integrator']),
  'PATCH /api/sites/:id': people(['admin', 'integrator']),
  'GET /api/loggers': people(everyone, ['fleet:read']),
  'GET /api/loggers/:id': people(everyone, ['fleet:read']),
  'POST /api/loggers': people(['admin', 'integrator']),
  'POST /api/loggers/batch': people(['admin', 'integrator']),
  'POST /api/loggers/:id/token': people(['admin']),
  'POST /api/batches/:id/labels': people(['admin']),
  'POST /api/loggers/:id/retire': people(['admin']),
  'POST /api/enrollments/lookup': people(['admin', 'integrator']),
  'POST /api/enrollments': people(['admin', 'integrator']),
  'POST /api/loggers/:id/move': people(['admin', 'integrator']),
  'PATCH /api/loggers/:id/profile': people(['admin', 'integrator']),
  'POST /api/loggers/:id/photo': people(['admin', 'integrator']),
  'GET /api/loggers/:id/photo': people(everyone),
  'GET /api/loggers/:id/commissioning': people(everyone),
  'POST /api/loggers/:id/commissioning/restart': people(['admin', 'integrator']),
  // Accounts: signing in (password, then a second-factor code when it is on), one's own account
  'POST /api/auth/sign-in/second-factor': publicRule,
  'POST /api/auth/sign-out-everywhere': ownAccountFirst(),
  'PATCH /api/auth/me': people(everyone),
  'POST /api/auth/password': people(everyone),
  'POST /api/auth/password-reset': publicRule,
  'POST /api/auth/password-reset/confirm': publicRule,
  'POST /api/auth/second-factor/setup': ownAccountFirst(),
  'POST /api/auth/second-factor/confirm': ownAccountFirst(),
  'DELETE /api/auth/second-factor': people(everyone),
  // Team: the admin forms it; an invitee opens their link
  'GET /api/team': people(['admin']),
  'POST /api/team/invitations': people(['admin']),
  'POST /api/team/:id/invitation': people(['admin']),
  'DELETE /api/team/:id/invitation': people(['admin']),
  'PATCH /api/team/:id': people(['admin']),
  'DELETE /api/team/:id/second-factor': people(['admin']),
  'POST /api/invitations/lookup': publicRule,
  'POST /api/invitations/accept': publicRule,
};

/** Adds rows for a domain; throws on a duplicate so two domains cannot silently disagree. */
export function declareAccess(rows: Record<string, Rule>) {
  for (const [key, rule] of Object.entries(rows)) {
    if (access[key]) throw new Error(`access rule declared twice: ${key}`);
    access[key] = rule;
  }
}

export const rules = { public: publicRule, device, people, everyone };

export function ruleFor(method: string, path: string): Rule | undefined {
  return access[`${method.toUpperCase()} ${path}`];
}
