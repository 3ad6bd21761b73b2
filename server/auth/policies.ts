// What an actor may do with a resource, said once. Pure: no I/O; the services load the facts a rule
// needs (a logger's status and site, the integrators assigned to a site) and ask here.
//
// Each verb of each resource has one rule in two parts:
// - who: the person's role or the token's scopes, and for an integrator the sites assigned to them
//   (PRODUCT.md: integrators create and edit the sites they are assigned to and read their sites'
//   loggers — and the loggers they registered themselves, before those reach a site);
// - when: what the resource's own state allows (the release lifecycle, a retired logger, a revoked key).
//
// `may` is both parts: answers carry it as `can: {…}`, so the console shows only the controls that
// will work and never re-derives roles. `authorize` enforces the first part with a 403; the second
// stays with the service, which answers a state it cannot act on with 409 and the state's reason.
// Scoped reads (the fleet table, lagging sites, the release dashboard, the site list) filter in SQL
// with `siteScope` / `loggerScope`, built from the same "view" rules, so a list and a detail agree.
//
// Routes have their own table (access.ts: which roles and token scopes may call a route at all); a
// policy never admits a role its route refuses, and tests/unit/policies.test.ts checks the two agree.
import type { Role } from '../../schemas/auth';
import { CONSOLE_VERBS, roles as ALL_ROLES, type ConsoleVerb } from '../../schemas/auth';
import { KEY_VERBS, type KeyState, type KeyVerb } from '../../schemas/keys';
import { LOGGER_VERBS, type LoggerStatus, type LoggerVerb } from '../../schemas/loggers';
import { MODEL_VERBS, type ModelVerb } from '../../schemas/models';
import { RELEASE_VERBS, type ReleaseAction, type ReleaseState, type ReleaseVerb } from '../../schemas/releases';
import { SITE_VERBS, type SiteVerb } from '../../schemas/sites';
import { TOKEN_VERBS, type TokenVerb } from '../../schemas/tokens';
import { problems } from '../http/problem';
import { allowedActions, canDelete } from '../rollout/lifecycle';
import type { Actor, Scope } from './actor';

// ─── Resources: the facts each rule reads ───────────────────────────────────

export type ReleaseResource = {
  kind: 'release';
  state: ReleaseState;
  /** Fewer valid signatures by distinct registered, unrevoked keys than the model's signing rule asks for. */
  signaturesShort: boolean;
};
export type LoggerResource = {
  kind: 'logger';
  status: LoggerStatus;
  siteId: string | null;
  /** The person who registered it (null for a token or the demo seed). */
  registeredBy: string | null;
  /** The integrators assigned to its site (empty without a site). */
  siteIntegratorIds: readonly string[];
};
export type SiteResource = { kind: 'site'; integratorIds: readonly string[] };
export type ModelResource = { kind: 'model' };
export type KeyResource = { kind: 'key'; state: KeyState };
export type TokenResource = { kind: 'token'; revoked: boolean };
/** The activity log as a whole. */
export type ActivityResource = { kind: 'activity' };
/** The fleet views: lagging sites, the version matrix, retries of failed installs. */
export type FleetResource = { kind: 'fleet' };
/** The console itself: what a person may create, apart from any one resource. */
export type ConsoleResource = { kind: 'console' };

export type Resource =
  | ReleaseResource
  | LoggerResource
  | SiteResource
  | ModelResource
  | KeyResource
  | TokenResource
  | ActivityResource
  | FleetResource
  | ConsoleResource;
export type Kind = Resource['kind'];
type ResourceOf<K extends Kind> = Extract<Resource, { kind: K }>;

export const model: ModelResource = { kind: 'model' };
export const activity: ActivityResource = { kind: 'activity' };
export const fleet: FleetResource = { kind: 'fleet' };
export const consoleResource: ConsoleResource = { kind: 'console' };

/** The verbs of each resource: the `can` lists of the answers (schemas/) and "view" where reading is scoped. */
export type VerbOf = {
  release: ReleaseVerb | 'view';
  logger: LoggerVerb | 'view';
  site: SiteVerb | 'view';
  model: ModelVerb;
  key: KeyVerb;
  token: TokenVerb;
  activity: 'read';
  fleet: 'read' | 'retry';
  console: ConsoleVerb;
};

// ─── Who ────────────────────────────────────────────────────────────────────

type Admits = (actor: Actor) => boolean;

/** People with one of the roles; the system (seed, trip rules) acts as the server itself. */
const people =
  (roles: readonly Role[]): Admits =>
  (actor) =>
    actor.type === 'system' || (actor.type === 'person' && roles.includes(actor.role));
const tokenWith =
  (scope: Scope): Admits =>
  (actor) =>
    actor.type === 'token' && actor.scopes.includes(scope);
const either =
  (...tests: Admits[]): Admits =>
  (actor) =>
    tests.some((test) => test(actor));

const EVERYONE = ALL_ROLES;
const ADMIN: readonly Role[] = ['admin'];
const ENGINEERS: readonly Role[] = ['admin', 'release_engineer'];
/** Who registers, enrolls and places loggers and keeps sites. */
const FIELD: readonly Role[] = ['admin', 'integrator'];
/** Who writes notes on loggers and sites (PRODUCT.md: support adds notes; release engineers and admins too). */
const NOTE_WRITERS: readonly Role[] = ['admin', 'release_engineer', 'support'];
const ACTIVITY_READERS: readonly Role[] = ['admin', 'release_engineer', 'support'];

const readers = either(people(EVERYONE), tokenWith('fleet:read'));
const releaseWriters = either(people(ENGINEERS), tokenWith('releases:write'));

export const NOT_YOUR_SITE = 'This site is not assigned to you; ask an admin to assign you to it.';
export const NOT_YOUR_LOGGER = 'This logger is not at a site assigned to you and was not registered by you.';

type Rule<R> = {
  /** The actors the rule admits by role or token scope. */
  by: Admits;
  /** For an integrator, also this: their sites (the person id is theirs). Without it, the role is enough. */
  integrator?: (personId: string, resource: R) => boolean;
  /** The 403's detail when `integrator` refuses. */
  refusal?: string;
  /** The 403's detail when `by` refuses. */
  roleRefusal?: string;
  /** What the resource's state must allow (absent: any state). */
  when?: (resource: R) => boolean;
};

/** An integrator sees loggers at their sites and the loggers they registered. */
const seesLogger = (me: string, l: LoggerResource) => l.registeredBy === me || (l.siteId !== null && l.siteIntegratorIds.includes(me));
/** An integrator works on a logger at their site, or on one they registered that has no site yet. */
const worksOnLogger = (me: string, l: LoggerResource) => (l.siteId !== null ? l.siteIntegratorIds.includes(me) : l.registeredBy === me);
const assignedTo = (me: string, s: SiteResource) => s.integratorIds.includes(me);

const lifecycle = (action: ReleaseAction): Rule<ReleaseResource> => ({
  by: releaseWriters,
  // A draft without its threshold of signatures by unrevoked keys cannot start its pilot (409).
  when: (r) => allowedActions(r.state).includes(action) && !(action === 'start_pilot' && r.signaturesShort),
});
const retry: Rule<unknown> = { by: people(ENGINEERS) };
const assignIntegrators: Rule<unknown> = { by: people(ADMIN), roleRefusal: 'Only an admin assigns integrators to a site.' };
const readActivity: Rule<unknown> = { by: people(ACTIVITY_READERS) };
const notRetired = (l: LoggerResource) => l.status !== 'retired';
const enrolled = (l: LoggerResource) => l.status === 'enrolled';

const POLICIES: { [K in Kind]: Record<VerbOf[K], Rule<ResourceOf<K>>> } = {
  release: {
    view: { by: readers },
    start_pilot: lifecycle('start_pilot'),
    widen: lifecycle('widen'),
    complete: lifecycle('complete'),
    pause: lifecycle('pause'),
    resume: lifecycle('resume'),
    stop: lifecycle('stop'),
    withdraw: lifecycle('withdraw'),
    edit: { by: releaseWriters, when: (r) => r.state === 'draft' },
    delete: { by: people(ENGINEERS), when: (r) => canDelete(r.state) },
    retry,
  },
  logger: {
    view: { by: readers, integrator: seesLogger, refusal: NOT_YOUR_LOGGER },
    enroll: { by: people(FIELD), when: (l) => l.status === 'registered' },
    move: { by: people(FIELD), integrator: worksOnLogger, refusal: NOT_YOUR_SITE, when: enrolled },
    retire: { by: people(ADMIN), when: notRetired },
    rotateToken: { by: people(ADMIN), when: notRetired },
    editProfile: { by: people(FIELD), integrator: worksOnLogger, refusal: NOT_YOUR_SITE, when: enrolled },
    addNote: { by: people(NOTE_WRITERS) },
    addPhoto: { by: people(FIELD), integrator: worksOnLogger, refusal: NOT_YOUR_SITE, when: notRetired },
  },
  site: {
    view: { by: readers, integrator: assignedTo, refusal: NOT_YOUR_SITE },
    edit: { by: people(FIELD), integrator: assignedTo, refusal: NOT_YOUR_SITE },
    assignIntegrators,
    addNote: { by: people(NOTE_WRITERS) },
    enroll: { by: people(FIELD), integrator: assignedTo, refusal: NOT_YOUR_SITE },
  },
  model: { edit: { by: people(ADMIN) } },
  key: {
    retire: { by: people(ADMIN), when: (k) => k.state === 'active' },
    revoke: { by: people(ADMIN), when: (k) => k.state !== 'revoked' },
  },
  token: { revoke: { by: people(ADMIN), when: (t) => !t.revoked } },
  activity: { read: readActivity },
  fleet: { read: { by: readers }, retry },
  console: {
    createRelease: { by: either(people(ENGINEERS), tokenWith('images:write')) },
    registerLoggers: { by: people(FIELD) },
    enrollLoggers: { by: people(FIELD) },
    createSite: { by: people(FIELD) },
    assignIntegrators,
    createModel: { by: people(ADMIN) },
    registerKey: { by: people(ADMIN) },
    createToken: { by: people(ADMIN) },
    readActivity,
  },
};

function ruleFor<R extends Resource>(verb: VerbOf[R['kind']], resource: R): Rule<R> {
  return (POLICIES[resource.kind] as Record<string, Rule<R>>)[verb];
}

/** Whether the rule's "who" admits the actor: the role or scope, and for an integrator their sites. */
function admits<R extends Resource>(rule: Rule<R>, actor: Actor, resource: R): 'yes' | 'role' | 'sites' {
  if (!rule.by(actor)) return 'role';
  if (actor.type === 'person' && actor.role === 'integrator' && rule.integrator && !rule.integrator(actor.id, resource)) return 'sites';
  return 'yes';
}

/** May the actor do this with the resource now: their role (and sites) and the resource's state together. */
export function may<R extends Resource>(actor: Actor, verb: VerbOf[R['kind']], resource: R): boolean {
  const rule = ruleFor(verb, resource);
  return admits(rule, actor, resource) === 'yes' && (rule.when?.(resource) ?? true);
}

/** Whether the resource's state allows the verb, whoever asks (a service answers "no" with 409). */
export function stateAllows<R extends Resource>(verb: VerbOf[R['kind']], resource: R): boolean {
  return ruleFor(verb, resource).when?.(resource) ?? true;
}

/** Refuses with 403 unless the actor's role (and, for an integrator, their sites) admits the verb. */
export function authorize<R extends Resource>(actor: Actor, verb: VerbOf[R['kind']], resource: R): void {
  const rule = ruleFor(verb, resource);
  const verdict = admits(rule, actor, resource);
  if (verdict === 'role') throw problems.forbidden(rule.roleRefusal);
  if (verdict === 'sites') throw problems.forbidden(rule.refusal);
}

// ─── `can` for answers ──────────────────────────────────────────────────────

/** The verbs each answer's `can` lists, as declared beside the answer in schemas/. */
export const CAN_VERBS = {
  release: RELEASE_VERBS,
  logger: LOGGER_VERBS,
  site: SITE_VERBS,
  model: MODEL_VERBS,
  key: KEY_VERBS,
  token: TOKEN_VERBS,
  console: CONSOLE_VERBS,
} as const;
type CanKind = keyof typeof CAN_VERBS;
export type CanOf<K extends CanKind> = Record<(typeof CAN_VERBS)[K][number], boolean>;

/** Every verb of the resource's `can`, each answered by `may`. */
export function canOf<K extends CanKind>(actor: Actor, resource: ResourceOf<K>): CanOf<K> {
  const r = resource as Resource;
  const verbs: readonly string[] = CAN_VERBS[r.kind as CanKind];
  return Object.fromEntries(verbs.map((verb) => [verb, may(actor, verb as never, r)])) as CanOf<K>;
}

// ─── SQL scopes for reads ───────────────────────────────────────────────────

/** A condition to AND into a WHERE clause, with its bound values (merge them into the query's replacements). */
export type SqlScope = { sql: string; replacements: Record<string, unknown> };

const ALL: SqlScope = { sql: 'TRUE', replacements: {} };
const NONE: SqlScope = { sql: 'FALSE', replacements: {} };
/** A column, optionally qualified; either part may be a quoted identifier (Sequelize's model aliases). */
const COLUMN = /^(?:[a-z_][a-z0-9_]*|"[A-Za-z_][A-Za-z0-9_]*")(?:\.(?:[a-z_][a-z0-9_]*|"[A-Za-z_][A-Za-z0-9_]*"))?$/;

function column(name: string): string {
  // Column names come from the calling query's own text, never from a request; this keeps it so.
  if (!COLUMN.test(name)) throw new Error(`not a column name: ${name}`);
  return name;
}

const integratorId = (actor: Actor) => (actor.type === 'person' && actor.role === 'integrator' ? actor.id : null);
const assignedSites = (siteIdColumn: string) => `${column(siteIdColumn)} IN (SELECT si.site_id FROM site_integrators si WHERE si.user_id = :scopePersonId)`;

/**
 * The sites whose things the actor may read (the site "view" rule): an integrator the sites assigned to
 * them, everyone else the rule admits every site. `siteIdColumn` names the site id in the query.
 */
export function siteScope(actor: Actor, siteIdColumn: string): SqlScope {
  column(siteIdColumn);
  if (!POLICIES.site.view.by(actor)) return NONE;
  const me = integratorId(actor);
  if (me === null) return ALL;
  return { sql: assignedSites(siteIdColumn), replacements: { scopePersonId: me } };
}

/**
 * The loggers the actor may read (the logger "view" rule): an integrator those at their sites and those
 * they registered, everyone else the rule admits every logger. `alias` is the loggers table's alias.
 */
export function loggerScope(actor: Actor, alias = 'l'): SqlScope {
  const l = column(alias);
  if (!POLICIES.logger.view.by(actor)) return NONE;
  const me = integratorId(actor);
  if (me === null) return ALL;
  return { sql: `(${l}.registered_by = :scopePersonId OR ${assignedSites(`${l}.site_id`)})`, replacements: { scopePersonId: me } };
}
