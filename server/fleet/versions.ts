// The version matrix: per model, loggers per running version × board; per channel the share
// running the channel's current release (see CURRENT_RELEASES) or newer; per release, installs per day
// since it started (confirmed_at, else finished_at, of installed reports; UTC days). All of it from the
// count summaries (summaries.ts), which the writes keep in their own transactions.
import { QueryTypes } from 'sequelize';
import type { VersionMatrix } from '../../schemas/fleet';
import { CURRENT_RELEASES } from './sql';
import type { FleetDeps } from './table';
import type { Actor } from '../auth/actor';
import { loggerScope } from '../auth/policies';
import { loggerCounts, reportCounts } from './summaries';
import { SQL_WORDS } from '../db/sql-words';

type ModelRow = { id: string; name: string; boards: { label: string }[] };
type CountRow = { model_id: string; firmware: string | null; board: string; n: number };
type ChannelRow = {
  model_id: string;
  channel: 'stable' | 'early';
  loggers: number;
  on_current: number;
  release_id: string | null;
  version: string | null;
  state: string | null;
  share: string | null;
  since: Date | null;
};
type ReleaseRow = { id: string; model_id: string; version: string; channel: 'stable' | 'early'; state: string; started_at: Date | null };
type AdoptionRow = { release_id: string; day: string; n: number };

const DAY_MS = 86_400_000;

/** Every UTC day from the release's start (or its first install) to today, gaps as 0, at most a year back. */
export function adoptionDays(startedAt: Date | null, installs: { day: string; n: number }[], now: Date) {
  const perDay = new Map(installs.map((a) => [a.day, a.n]));
  const first = [startedAt ? new Date(startedAt).toISOString().slice(0, 10) : null, installs[0]?.day].filter((d): d is string => Boolean(d)).sort()[0];
  if (!first) return [];
  const today = Date.parse(now.toISOString().slice(0, 10));
  let t = Math.max(Date.parse(first), today - 365 * DAY_MS);
  const out: { day: string; installed: number; cumulative: number }[] = [];
  let cumulative = [...perDay].filter(([d]) => Date.parse(d) < t).reduce((sum, [, n]) => sum + n, 0);
  for (; t <= today; t += DAY_MS) {
    const day = new Date(t).toISOString().slice(0, 10);
    const installed = perDay.get(day) ?? 0;
    cumulative += installed;
    out.push({ day, installed, cumulative });
  }
  return out;
}

/**
 * The matrix of the loggers the actor may read (server/auth/policies.ts): an integrator's counts are their
 * own. Counts come from the count summaries (summaries.ts), exact at the request's snapshot.
 */
export async function versionMatrix(deps: FleetDeps, actor: Actor): Promise<VersionMatrix> {
  const scope = loggerScope(actor, 'c');
  const loggers = loggerCounts(scope);
  const reports = reportCounts(scope);
  const q = <T extends object>(sql: string) => deps.sequelize.query<T>(sql, { type: QueryTypes.SELECT, replacements: { ...SQL_WORDS, ...scope.replacements } });
  const [models, counts, channels, releases, adoption] = await Promise.all([
    q<ModelRow>('SELECT id, name, boards FROM models ORDER BY lower(name), id'),
    q<CountRow>(
      `SELECT c.model_id, c.firmware, c.board, sum(c.n)::int AS n FROM ${loggers} c WHERE c.status <> :retired
        GROUP BY c.model_id, c.firmware, c.firmware_key, c.board HAVING sum(c.n) <> 0 ORDER BY c.model_id, c.firmware_key DESC, c.board`,
    ),
    q<ChannelRow>(
      `WITH current_releases AS (${CURRENT_RELEASES}),
       channels AS (SELECT m.id AS model_id, t.channel FROM models m CROSS JOIN unnest(ARRAY[:channels]::text[]) t(channel)),
       enrolled AS (SELECT c.model_id, c.channel, c.firmware_key, sum(c.n) AS n FROM ${loggers} c WHERE c.status = :enrolled GROUP BY 1, 2, 3)
       SELECT t.model_id, t.channel,
              (SELECT COALESCE(sum(e.n), 0)::int FROM enrolled e WHERE e.model_id = t.model_id AND e.channel = t.channel) AS loggers,
              (SELECT COALESCE(sum(e.n), 0)::int FROM enrolled e WHERE e.model_id = t.model_id AND e.channel = t.channel
                  AND cr.id IS NOT NULL AND e.firmware_key >= cr.version_key) AS on_current,
              cr.id AS release_id, cr.version, cr.state, cr.share, cr.since
         FROM channels t LEFT JOIN current_releases cr ON cr.model_id = t.model_id AND cr.channel = t.channel
        ORDER BY t.model_id, t.channel DESC`,
    ),
    q<ReleaseRow>(
      `SELECT id, model_id, version, channel, state, LEAST(piloted_at, widened_at, completed_at) AS started_at
         FROM releases WHERE state <> :draft ORDER BY model_id, heliodor_semver_key(version) COLLATE "C" DESC`,
    ),
    q<AdoptionRow>(
      `SELECT c.release_id, to_char(c.day, 'YYYY-MM-DD') AS day, sum(c.n)::int AS n
         FROM ${reports} c WHERE c.state = :installed AND c.day IS NOT NULL
        GROUP BY 1, 2 HAVING sum(c.n) <> 0 ORDER BY 1, 2`,
    ),
  ]);

  const adoptionOf = new Map<string, AdoptionRow[]>();
  for (const a of adoption) adoptionOf.set(a.release_id, [...(adoptionOf.get(a.release_id) ?? []), a]);

  return {
    models: models.map((m) => {
      const versions = new Map<string, { firmware: string | null; total: number; byBoard: Record<string, number> }>();
      for (const c of counts.filter((x) => x.model_id === m.id)) {
        const key = c.firmware ?? '';
        const v = versions.get(key) ?? { firmware: c.firmware, total: 0, byBoard: {} };
        v.total += c.n;
        v.byBoard[c.board] = (v.byBoard[c.board] ?? 0) + c.n;
        versions.set(key, v);
      }
      return {
        modelId: m.id,
        modelName: m.name,
        boards: m.boards.map((b) => b.label),
        versions: [...versions.values()],
        channels: channels
          .filter((t) => t.model_id === m.id)
          .map((t) => ({
            channel: t.channel,
            currentRelease: t.release_id
              ? { id: t.release_id, version: t.version!, state: t.state!, share: Number(t.share), since: t.since ? new Date(t.since).toISOString() : null }
              : null,
            loggers: t.loggers,
            onCurrent: t.on_current,
            share: t.loggers === 0 ? 0 : t.on_current / t.loggers,
          })),
        releases: releases
          .filter((r) => r.model_id === m.id)
          .map((r) => {
            const days = adoptionDays(r.started_at, adoptionOf.get(r.id) ?? [], deps.now());
            return { id: r.id, version: r.version, channel: r.channel, state: r.state, startedAt: r.started_at ? new Date(r.started_at).toISOString() : null, adoption: days };
          }),
      };
    }),
  };
}
