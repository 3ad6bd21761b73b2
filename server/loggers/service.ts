// The logger registry: registration (one or a CSV batch), token rotation, retirement, the list and the
// detail. Tokens are issued here and leave only in the response that issues them.
import { fn, col, where, QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { Logger, LoggerModel, SiteIntegrator } from '../db/models';
import { recordActivity } from '../activity/service';
import { problems } from '../http/problem';
import type { Actor, RequestContext } from '../auth/actor';
import { authorize } from '../auth/policies';
import { issueLoggerToken } from './tokens';
import { parseLoggerBatch } from './batch';
import { labelPng } from './labels';
import { enrollmentLink } from '../../lib/label-sheet';
import { loggerResource, presentDetail } from './present';
import { listFleet } from '../fleet/table';
import type { FleetList } from '../../schemas/fleet';
import type {
  BatchLabelsIssued,
  BatchRegistered,
  IssuedLogger,
  LoggerDetail,
  LoggersQuery,
  LoggerVerb,
  RegisterLoggerRequest,
  RotatedToken,
} from '../../schemas/loggers';

export type RegistryDeps = { sequelize: Sequelize; now: () => Date };

const personId = (actor: Actor) => (actor.type === 'person' ? actor.id : null);

/** A label for a token just issued: the QR of the enrollment link with serial, model and board beside it. */
export function labelFor(origin: string, token: string, logger: { serial: string; board: string }, modelName: string): string {
  return labelPng(enrollmentLink(origin, token), { serial: logger.serial, modelName, board: logger.board });
}

/**
 * The logger, or 404; 403 when the actor may not see it (an integrator: not at their site, not registered by
 * them) or may not do `verb` with it (its state is the caller's to check: 409). Locks the row when given a
 * transaction.
 */
export async function loggerFor(actor: Actor, id: string, transaction?: Transaction, verb: LoggerVerb | 'view' = 'view'): Promise<Logger> {
  const logger = await Logger.findByPk(id, transaction ? { transaction, lock: transaction.LOCK.UPDATE } : {});
  if (!logger) throw problems.notFound('logger');
  const resource = await loggerResource(logger, transaction);
  authorize(actor, 'view', resource);
  if (verb !== 'view') authorize(actor, verb, resource);
  return logger;
}

async function modelFor(id: string, transaction?: Transaction): Promise<LoggerModel> {
  const model = await LoggerModel.findByPk(id, { transaction });
  if (!model) throw new Error(`missing model ${id}`);
  return model;
}

// ─── Registration ───────────────────────────────────────────────────────────

export async function registerLogger(deps: RegistryDeps, ctx: RequestContext, body: RegisterLoggerRequest, origin: string): Promise<IssuedLogger> {
  const model = await LoggerModel.findByPk(body.modelId);
  if (!model) throw problems.badRequest('Check the body: modelId.', [{ path: 'modelId', message: 'no such model' }]);
  const board = model.boards.find((b) => b.label.toLowerCase() === body.board.toLowerCase());
  if (!board) {
    const listed = model.boards.map((b) => b.label).join(', ');
    throw problems.badRequest('Check the body: board.', [{ path: 'board', message: `"${body.board}" is not a board revision of ${model.name} (${listed})` }]);
  }
  const taken = await Logger.findOne({ where: where(fn('lower', col('serial')), body.serial.toLowerCase()) });
  if (taken) throw problems.conflict(`A logger with serial ${taken.serial} is already registered.`, { loggerId: taken.id });

  const { token, digest } = issueLoggerToken();
  const logger = await deps.sequelize.transaction(async (transaction) => {
    const created = await Logger.create(
      {
        serial: body.serial,
        modelId: model.id,
        board: board.label,
        channel: body.channel,
        tokenDigest: digest,
        tokenIssuedAt: deps.now(),
        registeredBy: personId(ctx.actor),
      },
      { transaction },
    );
    await recordActivity(transaction, ctx, {
      action: 'logger.registered',
      targetType: 'logger',
      targetId: created.id,
      summary: `Logger ${created.serial} registered (${model.name}, board ${board.label}, ${body.channel} channel)`,
    });
    return created;
  });
  return {
    id: logger.id,
    serial: logger.serial,
    board: logger.board,
    channel: logger.channel,
    modelId: model.id,
    modelName: model.name,
    token,
    labelPng: labelFor(origin, token, logger, model.name),
  };
}

/** A whole CSV upload: checked completely first (422 naming every bad line, nothing stored), then one transaction. */
export async function registerBatch(deps: RegistryDeps, ctx: RequestContext, file: Buffer, fileName: string): Promise<BatchRegistered> {
  const models = await LoggerModel.findAll();
  const existing = (await Logger.findAll({ attributes: ['serial'], raw: true })) as unknown as { serial: string }[];
  const result = parseLoggerBatch(
    file,
    models.map((m) => ({ id: m.id, name: m.name, boards: m.boards.map((b) => b.label) })),
    new Set(existing.map((e) => e.serial)),
  );
  if (!result.ok) {
    const lines = [...new Set(result.errors.map((e) => e.line))];
    const where = lines.length === 1 ? `line ${lines[0]}` : `${lines.length} lines (first: line ${lines[0]})`;
    throw problems.unprocessable(`The file has problems on ${where}; nothing was registered. Fix them and upload the whole file again.`, result.errors);
  }
  const modelName = new Map(models.map((m) => [m.id, m.name]));
  const issued = result.rows.map((row) => ({ row, ...issueLoggerToken() }));
  const issuedAt = deps.now();
  const { loggers: created, batch } = await deps.sequelize.transaction(async (transaction) => {
    // The batch is kept, so its labels can be issued again as one if this answer is lost.
    const [batch] = await deps.sequelize.query<{ id: string; created_at: Date }>(
      'INSERT INTO logger_batches (file_name, count, registered_by, created_at) VALUES (:fileName, :count, :by, :at) RETURNING id, created_at',
      { transaction, type: QueryTypes.SELECT, replacements: { fileName: fileName || 'a CSV file', count: issued.length, by: personId(ctx.actor), at: issuedAt } },
    );
    const loggers = await Logger.bulkCreate(
      issued.map(({ row, digest }) => ({
        serial: row.serial,
        modelId: row.modelId,
        board: row.board,
        channel: row.channel,
        tokenDigest: digest,
        tokenIssuedAt: issuedAt,
        registeredBy: personId(ctx.actor),
        batchId: batch.id,
      })),
      { transaction, returning: ['id', 'serial'] },
    );
    await recordActivity(transaction, ctx, {
      action: 'logger.batch_registered',
      targetType: 'batch',
      targetId: batch.id,
      summary: `${loggers.length} loggers registered from ${fileName || 'a CSV file'} (${loggers[0].serial} … ${loggers[loggers.length - 1].serial})`,
      details: { count: loggers.length, fileName, first: loggers[0].serial, last: loggers[loggers.length - 1].serial },
    });
    return { loggers, batch };
  });
  const idOf = new Map(created.map((l) => [l.serial, l.id]));
  const rows = issued.map(({ row, token }) => ({
    id: idOf.get(row.serial)!,
    serial: row.serial,
    token,
    board: row.board,
    channel: row.channel,
    modelName: modelName.get(row.modelId) ?? '',
  }));
  return { rows, total: rows.length, batch: { id: batch.id, fileName: fileName || 'a CSV file', registeredAt: new Date(batch.created_at).toISOString(), count: rows.length } };
}

/**
 * New labels for a whole batch (admin): every logger of the batch still waiting for enrollment gets a new
 * token, so the labels and bench sheet of the first answer stop working at once, and the answer is a new
 * bench sheet and label sheet, shown once. Enrolled loggers keep theirs (their boards run on them in the
 * field) and retired ones have none; both are listed as skipped. One transaction, one activity row.
 */
export async function issueBatchLabels(deps: RegistryDeps, ctx: RequestContext, batchId: string): Promise<BatchLabelsIssued> {
  return deps.sequelize.transaction(async (transaction) => {
    const [batch] = await deps.sequelize.query<{ id: string; file_name: string; created_at: Date; count: number }>(
      'SELECT id, file_name, created_at, count FROM logger_batches WHERE id = :batchId FOR UPDATE',
      { transaction, type: QueryTypes.SELECT, replacements: { batchId } },
    );
    if (!batch) throw problems.notFound('batch');
    const loggers = await Logger.findAll({ where: { batchId }, order: [['serial', 'ASC']], transaction, lock: transaction.LOCK.UPDATE });
    const waiting = loggers.filter((l) => l.status === 'registered');
    const skipped = loggers.filter((l) => l.status !== 'registered').map((l) => ({ serial: l.serial, status: l.status }));
    if (waiting.length === 0) {
      throw problems.conflict(`Every logger of the batch ${batch.file_name} is enrolled or retired: there is no label left to replace.`, { skipped: skipped.length });
    }
    const models = new Map((await LoggerModel.findAll({ transaction })).map((m) => [m.id, m.name]));
    const issuedAt = deps.now();
    const rows: BatchRegistered['rows'] = [];
    for (const logger of waiting) {
      const { token, digest } = issueLoggerToken();
      // Replacing the digest revokes the old token at once: nothing else recognises it.
      await logger.update({ tokenDigest: digest, tokenIssuedAt: issuedAt }, { transaction });
      rows.push({ id: logger.id, serial: logger.serial, token, board: logger.board, channel: logger.channel, modelName: models.get(logger.modelId) ?? '' });
    }
    await recordActivity(transaction, ctx, {
      action: 'logger.batch_labels_issued',
      targetType: 'batch',
      targetId: batch.id,
      summary: `New labels for ${rows.length} loggers of the batch ${batch.file_name} (${rows[0].serial} … ${rows[rows.length - 1].serial}); their old labels no longer work`,
      details: { count: rows.length, skipped: skipped.length, fileName: batch.file_name, first: rows[0].serial, last: rows[rows.length - 1].serial },
    });
    return {
      rows,
      total: rows.length,
      skipped,
      batch: { id: batch.id, fileName: batch.file_name, registeredAt: new Date(batch.created_at).toISOString(), count: batch.count },
    };
  });
}

// ─── Token rotation and retirement (admin) ──────────────────────────────────

export async function rotateToken(deps: RegistryDeps, ctx: RequestContext, id: string, origin: string): Promise<RotatedToken> {
  const { token, digest } = issueLoggerToken();
  const { logger, model } = await deps.sequelize.transaction(async (transaction) => {
    const logger = await loggerFor(ctx.actor, id, transaction, 'rotateToken');
    if (logger.status === 'retired') throw problems.conflict(`Logger ${logger.serial} is retired; a retired logger gets no new token.`);
    // Replacing the digest revokes the old token at once: nothing else recognises it.
    await logger.update({ tokenDigest: digest, tokenIssuedAt: deps.now() }, { transaction });
    await recordActivity(transaction, ctx, {
      action: 'logger.token_rotated',
      targetType: 'logger',
      targetId: logger.id,
      summary: `Token of logger ${logger.serial} rotated; the old label no longer works`,
    });
    return { logger, model: await modelFor(logger.modelId, transaction) };
  });
  return { token, labelPng: labelFor(origin, token, logger, model.name), serial: logger.serial, modelName: model.name, board: logger.board };
}

export async function retireLogger(deps: RegistryDeps, ctx: RequestContext, id: string, reason: string | undefined): Promise<LoggerDetail> {
  return deps.sequelize.transaction(async (transaction) => {
    const logger = await loggerFor(ctx.actor, id, transaction, 'retire');
    if (logger.status === 'retired') throw problems.conflict(`Logger ${logger.serial} is already retired.`);
    // Status retired revokes the token: findLoggerByToken (the device API's lookup) refuses retired loggers.
    await logger.update({ status: 'retired', retiredAt: deps.now() }, { transaction });
    await recordActivity(transaction, ctx, {
      action: 'logger.retired',
      targetType: 'logger',
      targetId: logger.id,
      summary: `Logger ${logger.serial} retired${reason ? `: ${reason}` : ''}`,
      details: reason ? { reason } : undefined,
    });
    return presentDetail(ctx.actor, logger, deps.now(), transaction);
  });
}

// ─── Reading ────────────────────────────────────────────────────────────────

export async function getLoggerDetail(deps: RegistryDeps, actor: Actor, id: string): Promise<LoggerDetail> {
  return presentDetail(actor, await loggerFor(actor, id), deps.now());
}

/** The fleet table: filters, allow-listed sort keys and paging in PostgreSQL (server/fleet/table.ts). */
export async function listLoggers(deps: RegistryDeps, actor: Actor, query: LoggersQuery): Promise<FleetList> {
  return listFleet(deps, actor, query);
}
