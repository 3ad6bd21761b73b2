// The policies (server/auth/policies.ts) against the product's own word on who may do what, written
// out here by hand rather than read from the module:
// - roles: PRODUCT.md "Who uses it (roles)" — admin everything; release engineer uploads and steers
//   releases and reads the fleet; integrator registers and enrolls loggers, creates and edits the sites
//   assigned to them and reads their sites' loggers; support reads everything and adds notes to
//   loggers and sites; automation tokens act within the scopes an admin gave them;
// - release states: the lifecycle's complete table (draft → pilot; pilot and widening → widen,
//   complete, pause, stop, withdraw; complete → pause, stop, withdraw; paused → resume, stop,
//   withdraw; stopped → resume, withdraw; withdrawn final; only a draft is edited or deleted);
// - signing keys: active → retired → revoked, revoked final; a retired or revoked logger gets no token.
// Every actor × verb × state is checked, and the policies are checked against the route table.
import { roles, CONSOLE_VERBS } from '../../schemas/auth';
import { RELEASE_STATES, RELEASE_VERBS, type ReleaseState } from '../../schemas/releases';
import { LOGGER_VERBS, type LoggerStatus } from '../../schemas/loggers';
import { LOGGER_STATUSES } from '../../schemas/words';
import { SITE_VERBS } from '../../schemas/sites';
import { KEY_VERBS, keyStates } from '../../schemas/keys';
import { TOKEN_VERBS, tokenScopes } from '../../schemas/tokens';
import { MODEL_VERBS } from '../../schemas/models';
import type { Actor, Scope } from '../../server/auth/actor';
import { Problem } from '../../server/http/problem';
import {
  activity,
  authorize,
  canOf,
  consoleResource,
  fleet,
  loggerScope,
  may,
  model,
  NOT_YOUR_LOGGER,
  NOT_YOUR_SITE,
  siteScope,
  stateAllows,
  type LoggerResource,
  type Resource,
  type SiteResource,
  type VerbOf,
} from '../../server/auth/policies';
import { access } from '../../server/auth/access';
// The domains declare their route rows when their routes module loads.
import '../../server/releases/routes';
import '../../server/fleet/routes';
import '../../server/keys/routes';
import '../../server/tokens/routes';
import { ALLOWED_ACTIONS } from '../helpers/lifecycle-table';

// ─── The actors ─────────────────────────────────────────────────────────────

const person = (role: (typeof roles)[number], id = `${role}-1`): Actor => ({ type: 'person', id, name: role, email: `${role}@fernhollow.example`, role });
const token = (...scopes: Scope[]): Actor => ({ type: 'token', id: 'tok-1', name: `CI ${scopes.join('+') || 'no scope'}`, scopes });
const TOMASZ = 'tomasz'; // an integrator (PRODUCT.md demo team)
const ADE = 'ade'; // another integrator

const actors = {
  admin: person('admin'),
  release_engineer: person('release_engineer'),
  support: person('support'),
  integrator: person('integrator', TOMASZ),
  'token fleet:read': token('fleet:read'),
  'token releases:write': token('releases:write'),
  'token images:write': token('images:write'),
  'token without scopes': token(),
  logger: { type: 'logger', id: 'logger-1', name: 'FL2-000101' } as Actor,
} satisfies Record<string, Actor>;
type ActorName = keyof typeof actors;
const actorNames = Object.keys(actors) as ActorName[];

/** Every combination of the given lists (the exhaustive grid). */
function grid<T extends Record<string, readonly unknown[]>>(axes: T): { [K in keyof T]: T[K][number] }[] {
  return Object.entries(axes).reduce<Record<string, unknown>[]>((rows, [key, values]) => rows.flatMap((row) => values.map((v) => ({ ...row, [key]: v }))), [{}]) as {
    [K in keyof T]: T[K][number];
  }[];
}

// ─── Releases ───────────────────────────────────────────────────────────────

/** Who may, by role or scope (PRODUCT.md: release engineers and admins steer; CI pushes with releases:write). */
const RELEASE_WHO: Record<(typeof RELEASE_VERBS)[number] | 'view', readonly ActorName[]> = {
  view: ['admin', 'release_engineer', 'support', 'integrator', 'token fleet:read'],
  start_pilot: ['admin', 'release_engineer', 'token releases:write'],
  widen: ['admin', 'release_engineer', 'token releases:write'],
  complete: ['admin', 'release_engineer', 'token releases:write'],
  pause: ['admin', 'release_engineer', 'token releases:write'],
  resume: ['admin', 'release_engineer', 'token releases:write'],
  stop: ['admin', 'release_engineer', 'token releases:write'],
  withdraw: ['admin', 'release_engineer', 'token releases:write'],
  edit: ['admin', 'release_engineer', 'token releases:write'],
  delete: ['admin', 'release_engineer'],
  retry: ['admin', 'release_engineer'],
};

/** The lifecycle's complete table, by hand (tests/helpers/lifecycle-table.ts), with a draft's edit and delete. */
const LIFECYCLE: Record<ReleaseState, readonly string[]> = { ...ALLOWED_ACTIONS, draft: [...ALLOWED_ACTIONS.draft, 'edit', 'delete'] };
const STATELESS_RELEASE_VERBS = ['view', 'retry'];

describe('release policies', () => {
  const cases = grid({ actor: actorNames, verb: [...RELEASE_VERBS, 'view'] as const, state: RELEASE_STATES, signaturesShort: [false, true] });

  test.each(cases)('when $actor asks to $verb a $state release (signatures short: $signaturesShort), then the roles table and the lifecycle decide', ({ actor, verb, state, signaturesShort }) => {
    const byState = STATELESS_RELEASE_VERBS.includes(verb) || (LIFECYCLE[state].includes(verb) && !(verb === 'start_pilot' && signaturesShort));
    const expected = RELEASE_WHO[verb].includes(actor) && byState;
    expect(may(actors[actor], verb, { kind: 'release', state, signaturesShort })).toBe(expected);
  });

  test('when a release engineer reads a widening release, then can lists every release verb, true exactly where the lifecycle allows', () => {
    const can = canOf(actors.release_engineer, { kind: 'release', state: 'widening', signaturesShort: false });
    expect(Object.keys(can).sort()).toEqual([...RELEASE_VERBS].sort());
    expect(Object.entries(can).filter(([, v]) => v).map(([k]) => k).sort()).toEqual(['complete', 'pause', 'retry', 'stop', 'widen', 'withdraw']);
  });
});

// ─── Loggers ────────────────────────────────────────────────────────────────

/** Where a logger stands to the integrator Tomasz (the other actors are not limited to sites). */
const situations = {
  'at his site': { siteId: 'site-1', registeredBy: 'admin-1', siteIntegratorIds: [TOMASZ, ADE] },
  'registered by him, no site yet': { siteId: null, registeredBy: TOMASZ, siteIntegratorIds: [] },
  "registered by him, now at Ade's site": { siteId: 'site-2', registeredBy: TOMASZ, siteIntegratorIds: [ADE] },
  "at Ade's site": { siteId: 'site-2', registeredBy: 'admin-1', siteIntegratorIds: [ADE] },
  'not registered by him, no site': { siteId: null, registeredBy: 'admin-1', siteIntegratorIds: [] },
} as const;
type Situation = keyof typeof situations;

/** PRODUCT.md: integrators read their sites' loggers (and those they registered); they work on loggers at their sites. */
const INTEGRATOR_SEES: Situation[] = ['at his site', 'registered by him, no site yet', "registered by him, now at Ade's site"];
const INTEGRATOR_WORKS_ON: Situation[] = ['at his site', 'registered by him, no site yet'];

const LOGGER_WHO: Record<(typeof LOGGER_VERBS)[number] | 'view', { actors: readonly ActorName[]; integrator?: Situation[] }> = {
  view: { actors: ['admin', 'release_engineer', 'support', 'integrator', 'token fleet:read'], integrator: INTEGRATOR_SEES },
  // Enrolling is by the label in hand; the site it goes to is checked by the site's own "enroll".
  enroll: { actors: ['admin', 'integrator'] },
  move: { actors: ['admin', 'integrator'], integrator: INTEGRATOR_WORKS_ON },
  retire: { actors: ['admin'] },
  rotateToken: { actors: ['admin'] },
  editProfile: { actors: ['admin', 'integrator'], integrator: INTEGRATOR_WORKS_ON },
  addNote: { actors: ['admin', 'release_engineer', 'support'] },
  addPhoto: { actors: ['admin', 'integrator'], integrator: INTEGRATOR_WORKS_ON },
};

/** What the logger's status allows: enroll a registered one; move and re-profile an enrolled one; nothing new for a retired one. */
const LOGGER_STATUS: Record<(typeof LOGGER_VERBS)[number] | 'view', readonly LoggerStatus[]> = {
  view: ['registered', 'enrolled', 'retired'],
  enroll: ['registered'],
  move: ['enrolled'],
  retire: ['registered', 'enrolled'],
  rotateToken: ['registered', 'enrolled'],
  editProfile: ['enrolled'],
  addNote: ['registered', 'enrolled', 'retired'],
  addPhoto: ['registered', 'enrolled'],
};

const loggerAt = (situation: Situation, status: LoggerStatus): LoggerResource => ({ kind: 'logger', status, ...situations[situation] });

describe('logger policies', () => {
  const cases = grid({ actor: actorNames, verb: [...LOGGER_VERBS, 'view'] as const, status: LOGGER_STATUSES, situation: Object.keys(situations) as Situation[] });

  test.each(cases)('when $actor asks to $verb a $status logger $situation, then the roles table, his sites and the status decide', ({ actor, verb, status, situation }) => {
    const rule = LOGGER_WHO[verb];
    const who = rule.actors.includes(actor) && (actor !== 'integrator' || !rule.integrator || rule.integrator.includes(situation));
    expect(may(actors[actor], verb, loggerAt(situation, status))).toBe(who && LOGGER_STATUS[verb].includes(status));
  });
});

// ─── Sites ──────────────────────────────────────────────────────────────────

const SITE_WHO: Record<(typeof SITE_VERBS)[number] | 'view', { actors: readonly ActorName[]; assignedOnly?: boolean }> = {
  view: { actors: ['admin', 'release_engineer', 'support', 'integrator', 'token fleet:read'], assignedOnly: true },
  edit: { actors: ['admin', 'integrator'], assignedOnly: true },
  // PRODUCT.md: the team and who works where are the admin's.
  assignIntegrators: { actors: ['admin'] },
  addNote: { actors: ['admin', 'release_engineer', 'support'] },
  enroll: { actors: ['admin', 'integrator'], assignedOnly: true },
};

describe('site policies', () => {
  const cases = grid({ actor: actorNames, verb: [...SITE_VERBS, 'view'] as const, assigned: [true, false] });

  test.each(cases)('when $actor asks to $verb a site (Tomasz assigned: $assigned), then the roles table and the assignment decide', ({ actor, verb, assigned }) => {
    const rule = SITE_WHO[verb];
    const site: SiteResource = { kind: 'site', integratorIds: assigned ? [TOMASZ, ADE] : [ADE] };
    const expected = rule.actors.includes(actor) && (actor !== 'integrator' || !rule.assignedOnly || assigned);
    expect(may(actors[actor], verb, site)).toBe(expected);
  });
});

// ─── Models, keys, tokens, activity, fleet views, the console ───────────────

describe('the other resources', () => {
  test.each(actorNames)('when %s asks, then only an admin edits a model', (actor) => {
    expect(may(actors[actor], 'edit', model)).toBe(actor === 'admin');
  });

  const keyMoves = { retire: ['active'], revoke: ['active', 'retired'] } as const;
  test.each(grid({ actor: actorNames, verb: KEY_VERBS, state: keyStates }))('when $actor asks to $verb a $state signing key, then only an admin, and only forward', ({ actor, verb, state }) => {
    expect(may(actors[actor], verb, { kind: 'key', state })).toBe(actor === 'admin' && (keyMoves[verb] as readonly string[]).includes(state));
  });

  test.each(grid({ actor: actorNames, verb: TOKEN_VERBS, revoked: [false, true] }))('when $actor asks to $verb an API token (revoked: $revoked), then only an admin, once', ({ actor, verb, revoked }) => {
    expect(may(actors[actor], verb, { kind: 'token', revoked })).toBe(actor === 'admin' && !revoked);
  });

  test.each(actorNames)('when %s asks for the activity log, then admins, release engineers and support read it; integrators and tokens do not', (actor) => {
    expect(may(actors[actor], 'read', activity)).toBe(['admin', 'release_engineer', 'support'].includes(actor));
  });

  test.each(actorNames)('when %s asks for the fleet views and for retries, then every person and fleet:read tokens read; engineers retry', (actor) => {
    expect(may(actors[actor], 'read', fleet)).toBe(['admin', 'release_engineer', 'support', 'integrator', 'token fleet:read'].includes(actor));
    expect(may(actors[actor], 'retry', fleet)).toBe(['admin', 'release_engineer'].includes(actor));
  });

  const CONSOLE_WHO: Record<(typeof CONSOLE_VERBS)[number], readonly ActorName[]> = {
    createRelease: ['admin', 'release_engineer', 'token images:write'],
    registerLoggers: ['admin', 'integrator'],
    enrollLoggers: ['admin', 'integrator'],
    createSite: ['admin', 'integrator'],
    assignIntegrators: ['admin'],
    createModel: ['admin'],
    registerKey: ['admin'],
    createToken: ['admin'],
    readActivity: ['admin', 'release_engineer', 'support'],
  };
  test.each(grid({ actor: actorNames, verb: CONSOLE_VERBS }))('when $actor opens the console, then $verb follows the roles table', ({ actor, verb }) => {
    expect(may(actors[actor], verb, consoleResource)).toBe(CONSOLE_WHO[verb].includes(actor));
  });

  test('when the system acts (seed, trip rules), then every rule admits it and only the state can refuse', () => {
    const system: Actor = { type: 'system', id: null, name: 'system' };
    expect(may(system, 'retire', loggerAt("at Ade's site", 'enrolled'))).toBe(true);
    expect(may(system, 'retire', loggerAt("at Ade's site", 'retired'))).toBe(false);
    expect(may(system, 'widen', { kind: 'release', state: 'withdrawn', signaturesShort: false })).toBe(false);
  });
});

// ─── can, authorize, state ──────────────────────────────────────────────────

describe('answers and refusals', () => {
  test('when can is built for each resource, then it lists exactly the verbs its schema declares', () => {
    const admin = actors.admin;
    expect(Object.keys(canOf(admin, loggerAt('at his site', 'enrolled')))).toEqual([...LOGGER_VERBS]);
    expect(Object.keys(canOf(admin, { kind: 'site', integratorIds: [] }))).toEqual([...SITE_VERBS]);
    expect(Object.keys(canOf(admin, model))).toEqual([...MODEL_VERBS]);
    expect(Object.keys(canOf(admin, { kind: 'key', state: 'active' }))).toEqual([...KEY_VERBS]);
    expect(Object.keys(canOf(admin, { kind: 'token', revoked: false }))).toEqual([...TOKEN_VERBS]);
    expect(Object.keys(canOf(admin, consoleResource))).toEqual([...CONSOLE_VERBS]);
  });

  const refusal = (fn: () => void) => {
    try {
      fn();
    } catch (error) {
      return error instanceof Problem ? { status: error.status, detail: error.detail } : error;
    }
    return null;
  };

  test("when an integrator reaches for a logger he may not see or a site not assigned to him, then 403 says why; his own pass", () => {
    const tomasz = actors.integrator;
    expect(refusal(() => authorize(tomasz, 'view', loggerAt("at Ade's site", 'enrolled')))).toEqual({ status: 403, detail: NOT_YOUR_LOGGER });
    expect(refusal(() => authorize(tomasz, 'move', loggerAt("registered by him, now at Ade's site", 'enrolled')))).toEqual({ status: 403, detail: NOT_YOUR_SITE });
    expect(refusal(() => authorize(tomasz, 'edit', { kind: 'site', integratorIds: [ADE] }))).toEqual({ status: 403, detail: NOT_YOUR_SITE });
    expect(refusal(() => authorize(tomasz, 'assignIntegrators', { kind: 'site', integratorIds: [TOMASZ] }))).toEqual({ status: 403, detail: 'Only an admin assigns integrators to a site.' });
    expect(refusal(() => authorize(tomasz, 'move', loggerAt('at his site', 'enrolled')))).toBeNull();
  });

  test('when the role admits the verb but the state does not, then authorize lets it through (the service answers 409) and stateAllows says no', () => {
    const retired = loggerAt('at his site', 'retired');
    expect(refusal(() => authorize(actors.admin, 'retire', retired))).toBeNull();
    expect(stateAllows('retire', retired)).toBe(false);
    expect(refusal(() => authorize(actors.support, 'retire', loggerAt('at his site', 'enrolled')))).toEqual({ status: 403, detail: 'Your role does not allow this action.' });
  });
});

// ─── SQL scopes ─────────────────────────────────────────────────────────────

describe('SQL scopes', () => {
  test.each(actorNames)('when %s reads a list, then the scope is the logger and site view rules in SQL', (actor) => {
    const sites = siteScope(actors[actor], 'l.site_id');
    const loggers = loggerScope(actors[actor], 'l');
    if (actor === 'integrator') {
      expect(sites).toEqual({ sql: 'l.site_id IN (SELECT si.site_id FROM site_integrators si WHERE si.user_id = :scopePersonId)', replacements: { scopePersonId: TOMASZ } });
      expect(loggers).toEqual({
        sql: '(l.registered_by = :scopePersonId OR l.site_id IN (SELECT si.site_id FROM site_integrators si WHERE si.user_id = :scopePersonId))',
        replacements: { scopePersonId: TOMASZ },
      });
    } else {
      const sees = ['admin', 'release_engineer', 'support', 'token fleet:read'].includes(actor);
      expect(sites).toEqual({ sql: sees ? 'TRUE' : 'FALSE', replacements: {} });
      expect(loggers).toEqual({ sql: sees ? 'TRUE' : 'FALSE', replacements: {} });
    }
  });

  test('when a scope is asked for with something that is not a column name, then it throws rather than build SQL', () => {
    expect(() => siteScope(actors.integrator, 'l.site_id; DROP TABLE sites')).toThrow(/not a column name/);
    expect(() => loggerScope(actors.admin, 'l OR TRUE')).toThrow(/not a column name/);
    expect(siteScope(actors.integrator, '"Site".id').sql).toMatch(/^"Site"\.id IN \(/);
  });
});

// ─── Policies and the route table agree ─────────────────────────────────────

/**
 * The route each verb is taken through. A route admits exactly the roles the verb's rule admits (the
 * integrator's site condition is the service's to check), and the token scopes too. Assigning integrators
 * is not listed: it rides on PATCH /api/sites/:id, which integrators may call for their other edits.
 */
const ROUTES: { [K in Resource['kind']]?: Partial<Record<VerbOf[K], string>> } = {
  release: {
    view: 'GET /api/releases/:id',
    start_pilot: 'POST /api/releases/:id/transitions',
    widen: 'POST /api/releases/:id/transitions',
    complete: 'POST /api/releases/:id/transitions',
    pause: 'POST /api/releases/:id/transitions',
    resume: 'POST /api/releases/:id/transitions',
    stop: 'POST /api/releases/:id/transitions',
    withdraw: 'POST /api/releases/:id/transitions',
    edit: 'PATCH /api/releases/:id',
    delete: 'DELETE /api/releases/:id',
    retry: 'POST /api/releases/:id/retry',
  },
  logger: {
    view: 'GET /api/loggers/:id',
    enroll: 'POST /api/enrollments',
    move: 'POST /api/loggers/:id/move',
    retire: 'POST /api/loggers/:id/retire',
    rotateToken: 'POST /api/loggers/:id/token',
    editProfile: 'PATCH /api/loggers/:id/profile',
    addNote: 'POST /api/loggers/:id/notes',
    addPhoto: 'POST /api/loggers/:id/photo',
  },
  site: { view: 'GET /api/sites/:id/notes', edit: 'PATCH /api/sites/:id', addNote: 'POST /api/sites/:id/notes', enroll: 'POST /api/enrollments' },
  model: { edit: 'PATCH /api/models/:id' },
  key: { retire: 'POST /api/keys/:id/retire', revoke: 'POST /api/keys/:id/revoke' },
  token: { revoke: 'DELETE /api/tokens/:id' },
  activity: { read: 'GET /api/activity' },
  fleet: { read: 'GET /api/fleet/lagging-sites', retry: 'POST /api/releases/:id/retry' },
  console: {
    createRelease: 'POST /api/releases',
    registerLoggers: 'POST /api/loggers',
    enrollLoggers: 'POST /api/enrollments',
    createSite: 'POST /api/sites',
    createModel: 'POST /api/models',
    registerKey: 'POST /api/keys',
    createToken: 'POST /api/tokens',
    readActivity: 'GET /api/activity',
  },
};

/** Each resource in the state and place where its rules admit the most, so only "who" is compared. */
const mostOpen = (verb: string): Resource[] => [
  { kind: 'release', state: (['start_pilot', 'edit', 'delete'].includes(verb) ? 'draft' : verb === 'resume' ? 'paused' : 'pilot') as ReleaseState, signaturesShort: false },
  loggerAt('at his site', verb === 'enroll' ? 'registered' : 'enrolled'),
  { kind: 'site', integratorIds: [TOMASZ] },
  model,
  { kind: 'key', state: 'active' },
  { kind: 'token', revoked: false },
  activity,
  fleet,
  consoleResource,
];

describe('policies and routes', () => {
  const rows = Object.entries(ROUTES).flatMap(([kind, verbs]) => Object.entries(verbs ?? {}).map(([verb, route]) => ({ kind, verb, route: route as string })));

  test.each(rows)('when $kind.$verb goes through $route, then the route admits exactly the roles and token scopes the policy does', ({ kind, verb, route }) => {
    const rule = access[route];
    expect(rule?.kind).toBe('people');
    if (rule?.kind !== 'people') return;
    const resource = mostOpen(verb).find((r) => r.kind === kind)!;
    for (const role of roles) expect([role, may(person(role, TOMASZ), verb as never, resource)]).toEqual([role, rule.roles.includes(role)]);
    for (const scope of tokenScopes) expect([scope, may(token(scope), verb as never, resource)]).toEqual([scope, (rule.scopes ?? []).includes(scope)]);
  });
});
