// Fleet use cases beyond the table: retrying failed installs, notes, the logger timeline, sparklines
// and "Why no update?". Each mutation is one transaction with its activity row.
import { QueryTypes, type Transaction } from 'sequelize';
import type { Actor, RequestContext } from '../auth/actor';
import { recordActivity } from '../activity/service';
import { problems } from '../http/problem';
import { decodeCursorParts, encodeCursorParts, isTimestampText, UUID_TEXT } from '../http/cursor';
import { loggerFor } from '../loggers/service';
import { authorize } from '../auth/policies';
import { siteResource } from '../sites/service';
import { REASON_LABELS } from '../rollout/decision';
import type { Note, RetryAnswer, RetryRequest, SiteNotesQuery, Sparklines, TimelineItem, WhyAnswer } from '../../schemas/fleet';
import { PROBE_MAX_C, PROBE_MIN_C, PROBE_POWER_ON_C } from '../../schemas/fleet';
import { DECISION_COLUMNS, decisionsFor, type LoggerForDecision } from './verdicts';
import type { FleetDeps } from './table';
import { SQL_WORDS } from '../db/sql-words';

const iso = (d: Date | string) => new Date(d).toISOString();

// ─── Retry failed installs ──────────────────────────────────────────────────

/**
 * Clears failed installs of a release for some loggers (or a whole site): retried_at is set after the
 * failure, the check-in service then passes no report for that release to the decision (rollout/reports.ts
 * retriedSince), and the next check-in is offered the release again when the other rules allow.
 * Failures already retried and not failed again are not counted twice.
 */
export async function retryFailed(deps: FleetDeps, ctx: RequestContext, releaseId: string, body: RetryRequest): Promise<RetryAnswer> {
  return deps.sequelize.transaction(async (transaction) => {
    const [release] = await deps.sequelize.query<{ id: string; version: string }>('SELECT id, version FROM releases WHERE id = :releaseId FOR SHARE', {
      type: QueryTypes.SELECT,
      replacements: { releaseId },
      transaction,
    });
    if (!release) throw problems.notFound('release');
    let target: string;
    const replacements: Record<string, unknown> = { ...SQL_WORDS, releaseId, now: deps.now() };
    if ('siteId' in body) {
      const [site] = await deps.sequelize.query<{ name: string }>('SELECT name FROM sites WHERE id = :siteId', { type: QueryTypes.SELECT, replacements: { siteId: body.siteId }, transaction });
      if (!site) throw problems.notFound('site');
      target = 'l.site_id = :siteId';
      replacements.siteId = body.siteId;
    } else {
      target = 'l.id IN (:loggerIds)';
      replacements.loggerIds = body.loggerIds;
    }
    const retried = await deps.sequelize.query<{ serial: string; logger_id: string }>(
      `UPDATE install_reports ir SET retried_at = :now
         FROM loggers l
        WHERE l.id = ir.logger_id AND ${target} AND ir.release_id = :releaseId AND ir.state = :failed
          AND (ir.retried_at IS NULL OR ir.retried_at < ir.updated_at)
        RETURNING l.serial, ir.logger_id`,
      { type: QueryTypes.SELECT, replacements, transaction },
    );
    const serials = retried.map((r) => r.serial).sort();
    await recordActivity(transaction, ctx, {
      action: 'release.retried',
      targetType: 'release',
      targetId: release.id,
      summary:
        serials.length === 0
          ? `Retry of ${release.version} asked; no failed install was waiting`
          : `Failed installs of ${release.version} retried on ${serials.length} logger${serials.length === 1 ? '' : 's'} (${serials.slice(0, 5).join(', ')}${serials.length > 5 ? ', …' : ''})`,
      details: { loggerIds: retried.map((r) => r.logger_id), ...('siteId' in body ? { siteId: body.siteId } : {}) },
    });
    return { retried: retried.length };
  });
}

// ─── Notes ──────────────────────────────────────────────────────────────────

const presentNote = (r: { id: string; target_type: 'logger' | 'site'; target_id: string; text: string; author_name: string; created_at: Date }): Note => ({
  id: r.id,
  targetType: r.target_type,
  targetId: r.target_id,
  text: r.text,
  authorName: r.author_name,
  createdAt: iso(r.created_at),
});

async function insertNote(deps: FleetDeps, ctx: RequestContext, t: Transaction, targetType: 'logger' | 'site', targetId: string, text: string) {
  const [row] = await deps.sequelize.query<Parameters<typeof presentNote>[0]>(
    `INSERT INTO notes (target_type, target_id, text, author_id, author_name, created_at)
     VALUES (:targetType, :targetId, :text, :authorId, :authorName, :now) RETURNING *`,
    {
      type: QueryTypes.SELECT,
      transaction: t,
      replacements: { targetType, targetId, text, authorId: ctx.actor.type === 'person' ? ctx.actor.id : null, authorName: ctx.actor.name, now: deps.now() },
    },
  );
  return presentNote(row);
}

export async function addLoggerNote(deps: FleetDeps, ctx: RequestContext, loggerId: string, text: string): Promise<Note> {
  return deps.sequelize.transaction(async (t) => {
    const logger = await loggerFor(ctx.actor, loggerId, t, 'addNote');
    const note = await insertNote(deps, ctx, t, 'logger', logger.id, text);
    await recordActivity(t, ctx, { action: 'logger.note_added', targetType: 'logger', targetId: logger.id, summary: `Note on logger ${logger.serial}`, details: { noteId: note.id } });
    return note;
  });
}

export async function addSiteNote(deps: FleetDeps, ctx: RequestContext, siteId: string, text: string): Promise<Note> {
  return deps.sequelize.transaction(async (t) => {
    const [site] = await deps.sequelize.query<{ id: string; name: string }>('SELECT id, name FROM sites WHERE id = :siteId FOR SHARE', {
      type: QueryTypes.SELECT,
      replacements: { siteId },
      transaction: t,
    });
    if (!site) throw problems.notFound('site');
    authorize(ctx.actor, 'addNote', await siteResource(site.id, t));
    const note = await insertNote(deps, ctx, t, 'site', site.id, text);
    await recordActivity(t, ctx, { action: 'site.note_added', targetType: 'site', targetId: site.id, summary: `Note on site ${site.name}`, details: { noteId: note.id } });
    return note;
  });
}

/** A page cursor for a site's notes: the last note's time (as PostgreSQL wrote it, microseconds kept) and id. */
function encodeNoteCursor(at: string, id: string) {
  return encodeCursorParts([at, id]);
}

function decodeNoteCursor(text: string): { at: string; id: string } {
  const parts = decodeCursorParts(text, 2);
  // A real calendar day and clock time and a UUID: a forged cursor must be a 400, not a database error.
  if (parts && isTimestampText(parts[0]) && UUID_TEXT.test(parts[1])) return { at: parts[0], id: parts[1] };
  throw problems.badRequest('Check the query: cursor.', [{ path: 'cursor', message: 'is not a cursor from this list of notes' }]);
}

/**
 * A site's notes, newest first, for everyone who may see the site (integrators only their assigned
 * sites, as GET /api/sites/:id). Keyset-paged on (created_at, id) through notes_target_idx, so a note
 * added while someone pages neither repeats nor shifts a page.
 */
export async function siteNotes(deps: FleetDeps, actor: Actor, siteId: string, query: SiteNotesQuery): Promise<{ rows: Note[]; total: number; nextCursor?: string }> {
  const after = query.cursor ? decodeNoteCursor(query.cursor) : null;
  const [site] = await deps.sequelize.query<{ id: string }>('SELECT id FROM sites WHERE id = :siteId', { type: QueryTypes.SELECT, replacements: { siteId } });
  if (!site) throw problems.notFound('site');
  authorize(actor, 'view', await siteResource(site.id));
  const replacements = { siteId: site.id, limit: query.limit + 1, afterAt: after?.at ?? null, afterId: after?.id ?? null };
  const [rows, [{ total }]] = await Promise.all([
    deps.sequelize.query<Parameters<typeof presentNote>[0] & { at_text: string }>(
      `SELECT n.*, n.created_at::text AS at_text FROM notes n
        WHERE n.target_type = 'site' AND n.target_id = :siteId
          ${after ? 'AND (n.created_at, n.id) < (CAST(:afterAt AS timestamptz), CAST(:afterId AS uuid))' : ''}
        ORDER BY n.created_at DESC, n.id DESC LIMIT :limit`,
      { type: QueryTypes.SELECT, replacements },
    ),
    deps.sequelize.query<{ total: number }>(`SELECT count(*) AS total FROM notes WHERE target_type = 'site' AND target_id = :siteId`, { type: QueryTypes.SELECT, replacements }),
  ]);
  const page = rows.slice(0, query.limit);
  const last = page[page.length - 1];
  return { rows: page.map(presentNote), total: Number(total), ...(rows.length > query.limit ? { nextCursor: encodeNoteCursor(last.at_text, last.id) } : {}) };
}

// ─── Timeline ───────────────────────────────────────────────────────────────

type TimelineRow = { at: Date; at_text: string; key: string; kind: TimelineItem['kind']; payload: Record<string, unknown> };

function encodeTimelineCursor(at: string, key: string) {
  return encodeCursorParts([at, key]);
}

/** The tie-break keys the timeline writes: check-in, reset, install report by release, activity by id, note by id. */
const TIMELINE_KEY = /^(c|r|i:[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}|a:\d{20}|n:[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12})$/;

function decodeTimelineCursor(text: string): { at: string; key: string } {
  const parts = decodeCursorParts(text, 2);
  // A real calendar day and clock time (2026-02-30 is not one) and a key of the timeline's own form.
  if (parts && isTimestampText(parts[0]) && TIMELINE_KEY.test(parts[1])) return { at: parts[0], key: parts[1] };
  throw problems.badRequest('Check the query: cursor.', [{ path: 'cursor', message: 'is not a cursor from this timeline' }]);
}

/**
 * One logger's history, newest first: check-ins (supply, temperature), resets with their reasons, install
 * reports, activity on the logger (enrollment, moves, profile changes, tokens, retirement) and notes.
 * Each source is read newest first through its own index, at most `limit + 1` rows, and merged in SQL;
 * ties on time are broken by a stable key, which with the time makes the cursor.
 */
export async function timeline(deps: FleetDeps, actor: Actor, loggerId: string, query: { cursor?: string; limit: number }): Promise<{ rows: TimelineItem[]; total: number; nextCursor?: string }> {
  const logger = await loggerFor(actor, loggerId);
  const after = query.cursor ? decodeTimelineCursor(query.cursor) : null;
  const before = (atCol: string, keyExpr: string) => (after ? `AND (${atCol} < CAST(:afterAt AS timestamptz) OR (${atCol} = CAST(:afterAt AS timestamptz) AND ${keyExpr} < :afterKey))` : '');
  const replacements = { loggerId: logger.id, limit: query.limit + 1, afterAt: after?.at ?? null, afterKey: after?.key ?? null };
  const ciKey = "'c'";
  const resetKey = "'r'";
  const irKey = "'i:' || ir.release_id::text";
  const acKey = "'a:' || lpad(a.id::text, 20, '0')";
  const noteKey = "'n:' || n.id::text";
  const sources = `
    (SELECT c.at, ${ciKey} AS key, 'check_in' AS kind,
            jsonb_build_object('firmware', c.firmware, 'supplyV', c.supply_v, 'tempC', c.readings->'temp_c', 'resets', c.resets) AS payload
       FROM check_ins c WHERE c.logger_id = :loggerId ${before('c.at', ciKey)} ORDER BY c.at DESC LIMIT :limit)
    UNION ALL
    (SELECT c.at, ${resetKey}, 'reset', jsonb_build_object('reason', c.reset_reason, 'counts', c.resets)
       FROM check_ins c WHERE c.logger_id = :loggerId AND c.resets IS NOT NULL AND c.resets <> '{}'::jsonb ${before('c.at', resetKey)}
      ORDER BY c.at DESC LIMIT :limit)
    UNION ALL
    (SELECT ir.updated_at, ${irKey}, 'install',
            jsonb_build_object('releaseId', ir.release_id, 'version', r.version, 'state', ir.state, 'reason', ir.reason, 'detail', ir.detail)
       FROM install_reports ir JOIN releases r ON r.id = ir.release_id WHERE ir.logger_id = :loggerId ${before('ir.updated_at', irKey)}
      ORDER BY ir.updated_at DESC LIMIT :limit)
    UNION ALL
    (SELECT a.at, ${acKey}, 'activity', jsonb_build_object('action', a.action, 'actorName', a.actor_name, 'summary', a.summary)
       FROM activity a WHERE a.target_type = 'logger' AND a.target_id = :loggerId AND a.action <> 'logger.note_added' ${before('a.at', acKey)}
      ORDER BY a.at DESC LIMIT :limit)
    UNION ALL
    (SELECT n.created_at, ${noteKey}, 'note', jsonb_build_object('id', n.id, 'authorName', n.author_name, 'text', n.text)
       FROM notes n WHERE n.target_type = 'logger' AND n.target_id = :loggerId ${before('n.created_at', noteKey)}
      ORDER BY n.created_at DESC LIMIT :limit)`;
  const [rows, [{ total }]] = await Promise.all([
    deps.sequelize.query<TimelineRow>(`SELECT t.*, t.at::text AS at_text FROM (${sources}) t ORDER BY t.at DESC, t.key DESC LIMIT :limit`, { type: QueryTypes.SELECT, replacements }),
    deps.sequelize.query<{ total: number }>(
      `SELECT (SELECT count(*) FROM check_ins WHERE logger_id = :loggerId)
            + (SELECT count(*) FROM check_ins WHERE logger_id = :loggerId AND resets IS NOT NULL AND resets <> '{}'::jsonb)
            + (SELECT count(*) FROM install_reports WHERE logger_id = :loggerId)
            + (SELECT count(*) FROM activity WHERE target_type = 'logger' AND target_id = :loggerId AND action <> 'logger.note_added')
            + (SELECT count(*) FROM notes WHERE target_type = 'logger' AND target_id = :loggerId) AS total`,
      { type: QueryTypes.SELECT, replacements: { loggerId: logger.id } },
    ),
  ]);
  const page = rows.slice(0, query.limit);
  const num = (x: unknown) => (x === null || x === undefined ? null : Number(x));
  const items: TimelineItem[] = page.map((r) => {
    const at = iso(r.at);
    const p = r.payload;
    switch (r.kind) {
      case 'check_in':
        return { kind: 'check_in', at, firmware: String(p.firmware), supplyV: num(p.supplyV), tempC: num(p.tempC), resets: (p.resets as Record<string, number>) ?? null };
      case 'reset':
        return { kind: 'reset', at, reason: (p.reason as string) ?? null, counts: (p.counts as Record<string, number>) ?? {} };
      case 'install':
        return { kind: 'install', at, releaseId: String(p.releaseId), version: String(p.version), state: String(p.state), reason: (p.reason as string) ?? null, detail: (p.detail as string) ?? null };
      case 'activity':
        return { kind: 'activity', at, action: String(p.action), actorName: String(p.actorName), summary: String(p.summary) };
      default:
        return { kind: 'note', at, id: String(p.id), authorName: String(p.authorName), text: String(p.text) };
    }
  });
  const last = page[page.length - 1];
  return { rows: items, total: Number(total), ...(rows.length > query.limit ? { nextCursor: encodeTimelineCursor(last.at_text, last.key) } : {}) };
}

// ─── Sparklines ─────────────────────────────────────────────────────────────

/** Hourly means of supply and probe temperature; readings the probe cannot mean (85 °C power-on value, outside −55…125 °C) are left out. */
export async function sparklines(deps: FleetDeps, actor: Actor, loggerId: string, days: number): Promise<Sparklines> {
  const logger = await loggerFor(actor, loggerId);
  const to = deps.now();
  const from = new Date(to.getTime() - days * 86_400_000);
  const temp = `(CASE WHEN jsonb_typeof(readings->'temp_c') = 'number' THEN (readings->>'temp_c')::float8 END)`;
  const rows = await deps.sequelize.query<{ hour: Date; supply_v: number | null; temp_c: number | null }>(
    `SELECT date_trunc('hour', at) AS hour, round(avg(supply_v)::numeric, 3)::float8 AS supply_v,
            round(avg(${temp}) FILTER (WHERE ${temp} <> ${PROBE_POWER_ON_C} AND ${temp} BETWEEN ${PROBE_MIN_C} AND ${PROBE_MAX_C})::numeric, 2)::float8 AS temp_c
       FROM check_ins WHERE logger_id = :loggerId AND at > :from AND at <= :to
      GROUP BY 1 ORDER BY 1`,
    { type: QueryTypes.SELECT, replacements: { loggerId: logger.id, from, to } },
  );
  return {
    from: from.toISOString(),
    to: to.toISOString(),
    points: rows.map((r) => ({ hour: iso(r.hour), supplyV: r.supply_v === null ? null : Number(r.supply_v), tempC: r.temp_c === null ? null : Number(r.temp_c) })),
  };
}

// ─── Why no update? ─────────────────────────────────────────────────────────

/** The decision the logger's next check-in would get now, from its latest reported state, for every release of its model. */
export async function whyNoUpdate(deps: FleetDeps, actor: Actor, loggerId: string): Promise<WhyAnswer> {
  const logger = await loggerFor(actor, loggerId);
  const [row] = await deps.sequelize.query<LoggerForDecision>(
    `SELECT ${DECISION_COLUMNS} FROM loggers l JOIN models m ON m.id = l.model_id LEFT JOIN sites s ON s.id = l.site_id WHERE l.id = :id`,
    { type: QueryTypes.SELECT, replacements: { id: logger.id } },
  );
  const now = deps.now();
  const decision = (await decisionsFor(deps.sequelize, [row], now)).get(row.id)!;
  return {
    loggerId: row.id,
    at: now.toISOString(),
    offer: decision.offer ? { releaseId: decision.offer.id, version: decision.offer.version } : null,
    verdicts: decision.considered.map((v) => ({ ...v, offer: v.outcome === 'offered', label: REASON_LABELS[v.reason] })),
  };
}
