// The releases a check-in decides among, cached per model in each process (DEVELOPERS.md: "cached
// in each process and invalidated through PostgreSQL LISTEN/NOTIFY, so a check-in needs one indexed
// read and one write").
//
// Invalidation, fastest first:
// 1. In-process: a change this process makes is dropped from its cache as soon as its transaction
//    commits — through the Release model's hooks, which every save through the model runs, the one
//    writer of transitions (server/releases/transitions.ts) included, whether a person or the trip rule
//    moved the release — so a transition takes effect at the very next check-in this process serves.
// 2. Other processes: triggers from migration 0004 NOTIFY `heliodor_releases` with the model id on
//    every change to releases, pilot sites or signing keys; each process LISTENs on a connection of
//    its own and drops that model's entry.
// 3. A short time-to-live (5 s) bounds staleness if a notification is ever missed (the listening
//    connection was down; it reconnects by itself every 5 s and then drops everything).
import pg from 'pg';
import type { Sequelize } from 'sequelize';
import { Release } from '../db/models';
import { loadReleasesOfModel, type OfferableRelease } from '../releases/targeting';

export const CACHE_TTL_MS = 5_000;
const CHANNEL = 'heliodor_releases';

/** A release of a model as the check-in decides on it (server/releases/targeting.ts reads it). */
export type CachedRelease = OfferableRelease;

type Entry = { at: number; releases: Promise<CachedRelease[]> };

export type ReleaseCache = {
  get(modelId: string): Promise<CachedRelease[]>;
  /** Drops one model's releases, or every model's when no id is given. */
  invalidate(modelId?: string): void;
  listening(): boolean;
  stop(): Promise<void>;
};

const caches = new Set<ReleaseCache>();
const HOOK = 'heliodor.deviceApi.releaseCache';

/** Model hooks: a release saved through the model drops every cache of this process once committed. */
function installModelHooks() {
  const drop = (options: { transaction?: { afterCommit(fn: () => void): void } | null }) => {
    const all = () => caches.forEach((c) => c.invalidate());
    if (options?.transaction) options.transaction.afterCommit(all);
    else all();
  };
  for (const type of ['afterCreate', 'afterUpdate', 'afterSave', 'afterDestroy', 'afterBulkUpdate', 'afterBulkDestroy', 'afterBulkCreate'] as const) {
    Release.removeHook(type, HOOK);
    // eslint-disable-next-line @typescript-eslint/no-explicit-any
    Release.addHook(type, HOOK, ((...args: any[]) => drop(args[args.length - 1] ?? {})) as never);
  }
}

export function createReleaseCache(
  sequelize: Sequelize,
  options: { ttlMs?: number; listen?: boolean; log?: (msg: string, err?: unknown) => void; clock?: () => number } = {},
): ReleaseCache {
  const ttl = options.ttlMs ?? CACHE_TTL_MS;
  const clock = options.clock ?? Date.now;
  const entries = new Map<string, Entry>();
  let generation = 0;
  let client: pg.Client | null = null;
  let connected = false;
  let stopped = false;
  let retry: NodeJS.Timeout | null = null;
  let warned = false;

  const invalidate = (modelId?: string) => {
    generation++;
    if (modelId) entries.delete(modelId);
    else entries.clear();
  };

  const connect = async () => {
    if (stopped) return;
    const c = sequelize.config;
    const next = new pg.Client({
      host: c.host,
      port: Number(c.port),
      user: c.username,
      password: c.password ?? undefined,
      database: c.database,
      application_name: 'heliodor-release-listener',
    });
    client = next;
    const lost = (err?: unknown) => {
      if (client !== next) return;
      connected = false;
      client = null;
      invalidate();
      next.removeAllListeners();
      next.on('error', () => undefined);
      next.end().catch(() => undefined);
      if (!stopped) {
        // One warning per outage, not one every 5 s.
        if (err && !warned) options.log?.('release change listener lost; reconnecting every 5 s', err);
        if (err) warned = true;
        retry = setTimeout(() => void connect(), 5_000);
        retry.unref?.();
      }
    };
    next.on('error', lost);
    next.on('end', () => lost());
    next.on('notification', (n) => {
      if (n.channel === CHANNEL) invalidate(n.payload || undefined);
    });
    try {
      await next.connect();
      // The socket must not keep a finished process (or a test run) alive.
      (next as unknown as { connection?: { stream?: { unref?: () => void } } }).connection?.stream?.unref?.();
      await next.query(`LISTEN ${CHANNEL}`);
      if (stopped) return void next.end().catch(() => undefined);
      connected = true;
      warned = false;
      invalidate(); // anything may have changed while nobody listened
    } catch (err) {
      lost(err);
    }
  };

  const cache: ReleaseCache = {
    async get(modelId) {
      const hit = entries.get(modelId);
      if (hit && clock() - hit.at < ttl) return hit.releases;
      const gen = generation;
      const releases = loadReleasesOfModel(sequelize, modelId);
      // Keep the result only if nothing was invalidated while it loaded.
      if (gen === generation) entries.set(modelId, { at: clock(), releases });
      releases.catch(() => entries.get(modelId)?.releases === releases && entries.delete(modelId));
      const result = await releases;
      if (gen !== generation && entries.get(modelId)?.releases === releases) entries.delete(modelId);
      return result;
    },
    invalidate,
    listening: () => connected,
    async stop() {
      stopped = true;
      caches.delete(cache);
      if (retry) clearTimeout(retry);
      const c = client;
      client = null;
      connected = false;
      if (c) {
        c.removeAllListeners();
        c.on('error', () => undefined);
        await c.end().catch(() => undefined);
      }
    },
  };
  caches.add(cache);
  installModelHooks();
  if (options.listen !== false) void connect();
  return cache;
}
