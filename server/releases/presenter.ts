// Release JSON for the console (camelCase; the shapes of schemas/releases.ts, which the client hooks read).
import { QueryTypes, type Sequelize } from 'sequelize';
import type { Actor } from '../auth/actor';
import { canOf } from '../auth/policies';
import { Image, LoggerModel, Release, ReleaseTransition, SigningKey, Site } from '../db/models';
import { allowedActions } from '../rollout/lifecycle';
import { driftTripPointsOf } from '../rollout/drift';
import { renderNotes } from './notes';
import { releaseSigning } from './signing';
import { FAILURE_REASONS, INSTALL_STATES } from '../../schemas/words';
import { type ReleaseCounts, type ReleaseRow, type ReleaseView, type TripFigures } from '../../schemas/releases';
import { SQL_WORDS } from '../db/sql-words';

export type InstallCounts = ReleaseCounts;

export type { ReleaseRow, ReleaseView };

/** Reports by their current state; failures by reason (a missing or unknown reason counts as other). */
export async function installCounts(sequelize: Sequelize, releaseId: string): Promise<InstallCounts> {
  const rows = await sequelize.query<{ state: string; reason: string | null; n: number }>(
    'SELECT state, reason, count(*)::int AS n FROM install_reports WHERE release_id = :releaseId GROUP BY state, reason',
    { type: QueryTypes.SELECT, replacements: { releaseId } },
  );
  const counts = Object.fromEntries(INSTALL_STATES.map((s) => [s, 0])) as unknown as InstallCounts;
  counts.failedByReason = Object.fromEntries(FAILURE_REASONS.map((r) => [r, 0])) as InstallCounts['failedByReason'];
  for (const row of rows) {
    if (row.state in counts) counts[row.state as (typeof INSTALL_STATES)[number]] += row.n;
    if (row.state === 'failed') {
      const reason = (FAILURE_REASONS as readonly string[]).includes(row.reason ?? '') ? (row.reason as (typeof FAILURE_REASONS)[number]) : 'other';
      counts.failedByReason[reason] += row.n;
    }
  }
  return counts;
}

/** The manifest bytes (a locked release is read without them, see transitions.ts). */
async function manifestOf(release: Release): Promise<Buffer> {
  if (release.manifest) return release.manifest;
  return (await Release.findByPk(release.id, { attributes: ['manifest'] }))?.manifest ?? Buffer.alloc(0);
}

/** A release as every caller sees it; `releaseFor` adds what this caller may do with it. */
export type ReleaseBody = Omit<ReleaseView, 'can'>;

/** The answer for one caller: the release with `can` (its lifecycle and the caller's role together). */
export function releaseFor(actor: Actor, release: ReleaseBody): ReleaseView {
  return { ...release, can: canOf(actor, { kind: 'release', state: release.state, signaturesShort: !release.signing.met }) };
}

export async function presentRelease(sequelize: Sequelize, release: Release): Promise<ReleaseBody> {
  const [model, image, key, transitions, pilotSites, counts] = await Promise.all([
    LoggerModel.findByPk(release.modelId),
    Image.findByPk(release.imageSha256),
    SigningKey.findByPk(release.signingKeyId),
    ReleaseTransition.findAll({ where: { releaseId: release.id }, order: [['id', 'ASC']] }),
    sequelize.query<{ id: string; name: string }>(
      'SELECT s.id, s.name FROM release_pilot_sites p JOIN sites s ON s.id = p.site_id WHERE p.release_id = :id ORDER BY s.name, s.id',
      { type: QueryTypes.SELECT, replacements: { ...SQL_WORDS, id: release.id } },
    ),
    installCounts(sequelize, release.id),
  ]);
  const signing = await releaseSigning(sequelize, { id: release.id, manifest: await manifestOf(release) }, model?.signingThreshold ?? 1);
  return {
    id: release.id,
    modelId: release.modelId,
    modelName: model?.name ?? '',
    version: release.version,
    channel: release.channel,
    state: release.state,
    share: release.share,
    resumeState: release.resumeState,
    stoppedBy: release.stoppedBy ?? null,
    tripFigures: (release.tripFigures as TripFigures | null) ?? null,
    boards: release.boards,
    manifestBoards: release.manifestBoards,
    upgradeFrom: release.upgradeFrom,
    pilotSiteIds: pilotSites.map((s) => s.id),
    pilotSites,
    daylightWindow: release.daylightWindow,
    tripFailureRatio: release.tripFailureRatio,
    tripMinReports: release.tripMinReports,
    tripResetFactor: release.tripResetFactor,
    ...driftTripPointsOf(release),
    securityCounter: release.securityCounter,
    notes: release.notes,
    notesHtml: renderNotes(release.notes),
    image: { sha256: release.imageSha256, size: image?.size ?? 0 },
    key: key ? { id: key.id, keyId: key.keyId, name: key.name, state: key.state } : null,
    flagged: key?.state === 'revoked',
    signing,
    expiresAt: release.expiresAt ? release.expiresAt.toISOString() : null,
    counts,
    history: transitions.map((t) => ({
      at: t.at.toISOString(),
      action: t.action,
      fromState: t.fromState,
      toState: t.toState,
      share: t.share === null || t.share === undefined ? null : Number(t.share),
      reason: t.reason,
      actorType: t.actorType,
      actorName: t.actorName,
    })),
    allowedActions: allowedActions(release.state),
    createdAt: release.createdAt.toISOString(),
    createdBy: { name: transitions[0]?.actorName ?? '' },
  };
}

export async function listReleaseRows(sequelize: Sequelize, filter: { modelId?: string; state?: string; channel?: string }): Promise<{ rows: ReleaseRow[]; total: number }> {
  const where = ['TRUE'];
  if (filter.modelId) where.push('r.model_id = :modelId');
  if (filter.state) where.push('r.state = :state');
  if (filter.channel) where.push('r.channel = :channel');
  const rows = await sequelize.query<Omit<ReleaseRow, 'createdAt'> & { createdAt: Date }>(
    `SELECT r.id, r.model_id AS "modelId", m.name AS "modelName", r.version, r.channel, r.state, r.share,
            coalesce(c.installed, 0)::int AS installed, coalesce(c.failed, 0)::int AS failed,
            r.created_at AS "createdAt", (k.state = 'revoked') AS flagged
       FROM releases r
       JOIN models m ON m.id = r.model_id
       JOIN signing_keys k ON k.id = r.signing_key_id
       LEFT JOIN LATERAL (
         SELECT count(*) FILTER (WHERE i.state = :installed) AS installed,
                count(*) FILTER (WHERE i.state = :failed) AS failed
           FROM install_reports i WHERE i.release_id = r.id
       ) c ON TRUE
      WHERE ${where.join(' AND ')}
      ORDER BY r.created_at DESC, r.id`,
    { type: QueryTypes.SELECT, replacements: { ...SQL_WORDS, ...filter } },
  );
  const out: ReleaseRow[] = rows.map((r) => ({ ...r, share: Number(r.share), createdAt: new Date(r.createdAt).toISOString() }));
  return { rows: out, total: out.length };
}

/** Names of sites by id, for checking pilot sites. */
export async function existingSiteIds(ids: string[]): Promise<Set<string>> {
  if (ids.length === 0) return new Set();
  return new Set((await Site.findAll({ where: { id: ids }, attributes: ['id'] })).map((s) => s.id));
}
