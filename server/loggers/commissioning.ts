// The first-readings check at work (the rule is lib/commissioning.ts): a check-in made under the logger's
// latest measurement profile brings one of its first readings; once the rule has a verdict (passed, or failed
// on an item) the verdict and the figures it used are written with the logger (migration 0020) and the
// activity log says so. The console reads it back, and an installer who fixed the wiring starts it again.
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { Logger, Site } from '../db/models';
import { recordActivity } from '../activity/service';
import { problems } from '../http/problem';
import type { Actor, RequestContext } from '../auth/actor';
import { canOf } from '../auth/policies';
import {
  COMMISSIONING_ITEM_NAMES,
  commissioningCheck,
  commissioningFigures,
  FIRST_READINGS_COUNTED,
  type CommissioningFigures,
  type CommissioningVerdict,
  type FirstReading,
} from '../../lib/commissioning';
import type { CommissioningView } from '../../schemas/loggers';
import { latestProfile, loggerResource, type StoredInstall } from './present';
import { loggerFor, type RegistryDeps } from './service';

type Row = {
  profile_version: number;
  readings: FirstReading[];
  figures: CommissioningFigures | null;
  verdict: CommissioningVerdict | null;
  passed: boolean | null;
  started_at: Date;
  judged_at: Date | null;
};

const numberOrNull = (x: unknown) => (x === null || x === undefined ? null : Number(x));

/** The figures for a logger's check now: its profile of `version`, its panel and its site's lowest temperature. */
async function figuresFor(
  loggerId: string,
  profile: { version: number; currentLsbA: number; powerLsbW: number },
  transaction?: Transaction,
): Promise<CommissioningFigures | { error: string }> {
  const logger = await Logger.findByPk(loggerId, { transaction });
  const install = (logger?.install as StoredInstall | null) ?? {};
  if (install.panelVocV === null || install.panelVocV === undefined) return { error: "the panel's open-circuit voltage was not entered at enrollment" };
  const site = logger?.siteId ? await Site.findByPk(logger.siteId, { transaction }) : null;
  return commissioningFigures(
    profile,
    { panelVocV: Number(install.panelVocV), vocTempCoeffPctPerC: numberOrNull(install.vocTempCoeffPctPerC) },
    site ? numberOrNull(site.minTempC) : null,
  );
}

/** "passed" or "failed: Current direction, Temperature probe". */
function verdictWords(verdict: CommissioningVerdict): string {
  if (verdict.state !== 'failed') return verdict.state;
  return `failed: ${verdict.items.filter((i) => !i.ok).map((i) => COMMISSIONING_ITEM_NAMES[i.item]).join(', ')}`;
}

/** What the check-in's statement returns when it counted its readings (server/device-api/checkin-store.ts). */
export type CountedReadings = {
  readings: FirstReading[];
  panelVocV: number | null;
  vocTempCoeffPctPerC: number | null;
  siteMinTempC: number | null;
};

/**
 * In the check-in's transaction, after it counted its readings: judges the readings counted so far, and once the
 * rule has a verdict writes it with the figures it used, and the activity. While the check waits nothing is
 * written, so a check-in under way costs no statement of its own here.
 */
export async function judgeFirstReadings(
  sequelize: Sequelize,
  t: Transaction,
  logger: { id: string; serial: string },
  profile: { version: number; currentLsbA: number; powerLsbW: number },
  counted: CountedReadings,
  now: Date,
  ctx: RequestContext,
): Promise<void> {
  if (counted.panelVocV === null || counted.panelVocV === undefined) return; // nothing to judge the panel voltage against
  const figures = commissioningFigures(
    profile,
    { panelVocV: Number(counted.panelVocV), vocTempCoeffPctPerC: numberOrNull(counted.vocTempCoeffPctPerC) },
    numberOrNull(counted.siteMinTempC),
  );
  if ('error' in figures) return; // shown on the logger's page
  const verdict = commissioningCheck(figures, counted.readings);
  if (verdict.state === 'waiting') return;
  await sequelize.query(
    `UPDATE commissioning_checks SET figures = CAST(:figures AS jsonb), verdict = CAST(:verdict AS jsonb), passed = :passed, judged_at = :now, updated_at = :now
      WHERE logger_id = :loggerId`,
    { transaction: t, replacements: { loggerId: logger.id, figures: JSON.stringify(figures), verdict: JSON.stringify(verdict), passed: verdict.state === 'passed', now } },
  );
  await recordActivity(t, ctx, {
    action: 'logger.commissioning_checked',
    targetType: 'logger',
    targetId: logger.id,
    summary: `First readings of logger ${logger.serial}: commissioning check ${verdictWords(verdict)}`,
    details: { passed: verdict.state === 'passed', profileVersion: figures.profileVersion, readings: verdict.counted },
  });
}

/**
 * Starts (or starts again) the logger's check under its profile of `profileVersion`: no readings, no verdict.
 * Enrollment starts it; loggers enrolled before the console kept the check have none until a person starts it.
 */
export async function startCommissioning(sequelize: Sequelize, transaction: Transaction, loggerId: string, profileVersion: number, now: Date): Promise<void> {
  await sequelize.query(
    `INSERT INTO commissioning_checks (logger_id, profile_version, readings, started_at, updated_at)
     VALUES (:loggerId, :profileVersion, '[]'::jsonb, :now, :now)
     ON CONFLICT (logger_id) DO UPDATE
        SET profile_version = EXCLUDED.profile_version, readings = EXCLUDED.readings, figures = NULL, verdict = NULL, passed = NULL,
            started_at = EXCLUDED.started_at, updated_at = EXCLUDED.updated_at, judged_at = NULL`,
    { replacements: { loggerId, profileVersion, now }, transaction },
  );
}

async function rowOf(loggerId: string, transaction?: Transaction): Promise<Row | null> {
  const [row] = await Logger.sequelize!.query<Row>(
    'SELECT profile_version, readings, figures, verdict, passed, started_at, judged_at FROM commissioning_checks WHERE logger_id = :loggerId',
    { type: QueryTypes.SELECT, replacements: { loggerId }, transaction },
  );
  return row ?? null;
}

/** The check as the console shows it: the stored verdict once judged, else the rule on the readings so far. */
export async function getCommissioning(deps: RegistryDeps, actor: Actor, id: string): Promise<CommissioningView> {
  const logger = await loggerFor(actor, id);
  const can = canOf(actor, await loggerResource(logger));
  const row = await rowOf(logger.id);
  const base = { readings: row?.readings ?? [], startedAt: row ? new Date(row.started_at).toISOString() : null, can: { restart: can.editProfile } };
  if (row?.judged_at && row.verdict && row.figures) {
    return { ...base, state: row.verdict.state, judgedAt: new Date(row.judged_at).toISOString(), figures: row.figures, verdict: row.verdict, problem: null };
  }
  const waiting = { ...base, state: 'waiting' as const, judgedAt: null, figures: null, verdict: null };
  if (logger.status !== 'enrolled') return { ...waiting, problem: 'The logger is not enrolled: the check starts with its enrollment.' };
  const profile = await latestProfile(logger.id);
  if (!profile) return { ...waiting, problem: 'The logger has no measurement profile yet.' };
  if (!row) {
    return {
      ...waiting,
      problem: `No first-readings check was kept for this logger (it was enrolled before the console checked first readings). Start the check to judge its next ${FIRST_READINGS_COUNTED} check-ins.`,
    };
  }
  const figures = await figuresFor(logger.id, { version: profile.version, currentLsbA: Number(profile.currentLsbA), powerLsbW: Number(profile.powerLsbW) });
  if ('error' in figures) return { ...waiting, problem: `The readings cannot be checked: ${figures.error}.` };
  // Readings made under an older profile do not count (the next check-in under the new one starts them over).
  const readings = row.profile_version === profile.version ? row.readings : [];
  return { ...waiting, readings, figures, verdict: commissioningCheck(figures, readings), problem: null };
}

/** After the wiring was fixed (or for a logger enrolled before the check was kept): its next check-ins are judged anew. */
export async function restartCommissioning(deps: RegistryDeps, ctx: RequestContext, id: string): Promise<CommissioningView> {
  await deps.sequelize.transaction(async (transaction) => {
    const logger = await loggerFor(ctx.actor, id, transaction, 'editProfile');
    if (logger.status !== 'enrolled') throw problems.conflict(`Logger ${logger.serial} is ${logger.status}; the first-readings check belongs to an enrolled logger.`);
    const profile = await latestProfile(logger.id, transaction);
    if (!profile) throw problems.conflict(`Logger ${logger.serial} has no measurement profile; the check compares readings with it.`);
    const row = await rowOf(logger.id, transaction);
    await startCommissioning(deps.sequelize, transaction, logger.id, profile.version, deps.now());
    const before = row?.verdict && row.judged_at ? `; it had ${verdictWords(row.verdict)}` : row ? `; it had ${row.readings.length} of ${FIRST_READINGS_COUNTED} readings` : '';
    await recordActivity(transaction, ctx, {
      action: 'logger.commissioning_restarted',
      targetType: 'logger',
      targetId: logger.id,
      summary: `First-readings check of logger ${logger.serial} started${row ? ' again' : ''}${before}`,
      details: row ? { previous: { passed: row.passed, readings: row.readings.length, judgedAt: row.judged_at } } : {},
    });
  });
  return getCommissioning(deps, ctx.actor, id);
}
