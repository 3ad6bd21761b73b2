// Shapes the console API answers for loggers and measurement profiles (camelCase, RFC 3339 times).
import { Logger, LoggerModel, MeasurementProfile, Site, User } from '../db/models';
import { SQL_WORDS } from '../db/sql-words';
import { siteResource } from '../sites/service';
import type { BatchSummary, LoggerDetail, ProfileView, TempResolutionBits } from '../../schemas/loggers';
import { QueryTypes, type Transaction } from 'sequelize';
import type { Actor } from '../auth/actor';
import { canOf, type LoggerResource } from '../auth/policies';

const iso = (d: Date | null | undefined) => (d ? new Date(d).toISOString() : null);
const numberOrNull = (x: unknown) => (x === null || x === undefined ? null : Number(x));

export function presentProfile(p: MeasurementProfile): ProfileView {
  return {
    version: p.version,
    shuntOhm: Number(p.shuntOhm),
    maxCurrentA: Number(p.maxCurrentA),
    currentLsbA: Number(p.currentLsbA),
    calibration: p.calibration,
    powerLsbW: Number(p.powerLsbW),
    busVMax: Number(p.busVMax),
    tempResolutionBits: p.tempResolutionBits as TempResolutionBits,
    sampleIntervalS: p.sampleIntervalS,
    panelWp: numberOrNull(p.panelWp),
    panelVocV: numberOrNull(p.panelVocV),
    createdAt: p.createdAt.toISOString(),
  };
}

export async function latestProfile(loggerId: string, transaction?: Transaction): Promise<MeasurementProfile | null> {
  return MeasurementProfile.findOne({ where: { loggerId }, order: [['version', 'DESC']], transaction });
}

/** What loggers.install holds: the install details entered at enrollment, and the photo's metadata. */
export type StoredInstall = {
  panelWp?: number | null;
  panelVocV?: number | null;
  /** The panel's temperature coefficient of Voc, %/°C, when the integrator gave it. */
  vocTempCoeffPctPerC?: number | null;
  notes?: string;
  photo?: { contentType: string; size: number; sha256: string; uploadedAt: string } | null;
};

/** Online: enrolled and seen within three check-in intervals (the overview counts it the same way). */
export function isOnline(logger: Logger, model: LoggerModel, now: Date): boolean {
  if (logger.status !== 'enrolled' || !logger.lastSeenAt) return false;
  return now.getTime() - new Date(logger.lastSeenAt).getTime() <= 3 * model.checkInIntervalS * 1000;
}

type Settled<T extends readonly (() => unknown)[]> = { -readonly [K in keyof T]: T[K] extends () => infer R ? Awaited<R> : never };

/**
 * Runs the lookups one after another inside a transaction (one connection answers one query at a
 * time) and side by side outside one (each takes its own pool connection).
 */
async function lookUp<T extends readonly (() => unknown)[]>(transaction: Transaction | undefined, lookups: T): Promise<Settled<T>> {
  if (!transaction) return (await Promise.all(lookups.map((lookup) => lookup()))) as Settled<T>;
  const results: unknown[] = [];
  for (const lookup of lookups) results.push(await lookup());
  return results as Settled<T>;
}

/** What the policies read about a logger: its status, who registered it, its site and that site's integrators. */
export async function loggerResource(logger: Logger, transaction?: Transaction): Promise<LoggerResource> {
  const site = logger.siteId ? await siteResource(logger.siteId, transaction) : null;
  return { kind: 'logger', status: logger.status, siteId: logger.siteId, registeredBy: logger.registeredBy, siteIntegratorIds: site?.integratorIds ?? [] };
}

/** The logger as the console shows it to the actor, with what they may do with it (`can`). */
export async function presentDetail(actor: Actor, logger: Logger, now: Date, transaction?: Transaction): Promise<LoggerDetail> {
  const [model, site, enrolledBy, profile, resource, batch] = await lookUp(transaction, [
    () => LoggerModel.findByPk(logger.modelId, { transaction }),
    () => (logger.siteId ? Site.findByPk(logger.siteId, { transaction }) : null),
    () => (logger.enrolledBy ? User.findByPk(logger.enrolledBy, { attributes: ['id', 'name'], transaction }) : null),
    () => latestProfile(logger.id, transaction),
    () => loggerResource(logger, transaction),
    () => (logger.batchId ? batchOf(logger.batchId, transaction) : null),
  ] as const);
  if (!model) throw new Error(`logger ${logger.id} names a missing model`);
  const install = logger.install as StoredInstall | null;
  return {
    id: logger.id,
    serial: logger.serial,
    modelId: logger.modelId,
    modelName: model.name,
    board: logger.board,
    channel: logger.channel,
    status: logger.status,
    online: isOnline(logger, model, now),
    site: site ? { id: site.id, name: site.name, customer: site.customer, timeZone: site.timeZone, minTempC: numberOrNull(site.minTempC) } : null,
    enrolledAt: iso(logger.enrolledAt),
    enrolledBy: enrolledBy ? { id: enrolledBy.id, name: enrolledBy.name } : null,
    install: install
      ? { panelWp: numberOrNull(install.panelWp), panelVocV: numberOrNull(install.panelVocV), vocTempCoeffPctPerC: numberOrNull(install.vocTempCoeffPctPerC), notes: install.notes ?? '', photo: Boolean(install.photo) }
      : null,
    profile: profile ? presentProfile(profile) : null,
    firmware: logger.firmware ?? null,
    lastSeenAt: iso(logger.lastSeenAt),
    supplyV: numberOrNull(logger.supplyV),
    tokenIssuedAt: iso(logger.tokenIssuedAt),
    retiredAt: iso(logger.retiredAt),
    createdAt: logger.createdAt.toISOString(),
    can: canOf(actor, resource),
    batch,
  };
}

/** A batch with how many of its loggers still wait for enrollment (status registered). */
export async function batchOf(id: string, transaction?: Transaction): Promise<(BatchSummary & { waiting: number }) | null> {
  const [row] = await Logger.sequelize!.query<{ id: string; file_name: string; created_at: Date; count: number; waiting: number }>(
    `SELECT b.id, b.file_name, b.created_at, b.count,
            (SELECT count(*)::int FROM loggers l WHERE l.batch_id = b.id AND l.status = :registered) AS waiting
       FROM logger_batches b WHERE b.id = :id`,
    { type: QueryTypes.SELECT, replacements: { ...SQL_WORDS, id }, transaction },
  );
  return row ? { id: row.id, fileName: row.file_name, registeredAt: new Date(row.created_at).toISOString(), count: row.count, waiting: row.waiting } : null;
}
