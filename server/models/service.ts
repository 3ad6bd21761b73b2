// Logger models and their board revisions (admin): rules and transactions.
import { fn, col, where, Op, type Sequelize } from 'sequelize';
import { Logger, LoggerModel, SigningKey } from '../db/models';
import { proposeTrustSet } from '../keys/trust-sets';
import { recordActivity } from '../activity/service';
import { problems } from '../http/problem';
import type { Actor, RequestContext } from '../auth/actor';
import { canOf, model as modelResource } from '../auth/policies';
import type { CreateModelRequest, LoggerModelView, UpdateModelRequest } from '../../schemas/models';

export function presentModel(actor: Actor, model: LoggerModel, loggerCount: number): LoggerModelView {
  return {
    id: model.id,
    name: model.name,
    boards: model.boards.map((b) => ({ label: b.label, note: b.note ?? '' })),
    minUpdateSupplyV: Number(model.minUpdateSupplyV),
    checkInIntervalS: model.checkInIntervalS,
    busVMax: Number(model.busVMax),
    shuntFullScaleV: Number(model.shuntFullScaleV),
    tempResolutions: [...model.tempResolutions].sort((a, b) => a - b),
    signingThreshold: model.signingThreshold,
    loggerCount,
    createdAt: model.createdAt.toISOString(),
    can: canOf(actor, modelResource),
  };
}

/** Loggers per model that are not retired. */
async function loggerCounts(modelIds: string[]): Promise<Map<string, number>> {
  if (modelIds.length === 0) return new Map();
  const rows = (await Logger.findAll({
    attributes: ['modelId', [fn('count', col('id')), 'count']],
    where: { modelId: modelIds, status: { [Op.ne]: 'retired' } },
    group: ['modelId'],
    raw: true,
  })) as unknown as { modelId: string; count: number }[];
  return new Map(rows.map((r) => [r.modelId, Number(r.count)]));
}

export async function listModels(actor: Actor): Promise<{ rows: LoggerModelView[]; total: number }> {
  const models = await LoggerModel.findAll({ order: [['name', 'ASC']] });
  const counts = await loggerCounts(models.map((m) => m.id));
  return { rows: models.map((m) => presentModel(actor, m, counts.get(m.id) ?? 0)), total: models.length };
}

export async function getModel(actor: Actor, id: string): Promise<LoggerModelView> {
  const model = await LoggerModel.findByPk(id);
  if (!model) throw problems.notFound('model');
  return presentModel(actor, model, (await loggerCounts([id])).get(id) ?? 0);
}

async function refuseTakenName(name: string, exceptId?: string) {
  const clash = await LoggerModel.findOne({ where: where(fn('lower', col('name')), name.toLowerCase()) });
  if (clash && clash.id !== exceptId) throw problems.conflict(`A model named "${clash.name}" already exists.`);
}

export async function createModel(sequelize: Sequelize, ctx: RequestContext, body: CreateModelRequest, now: () => Date = () => new Date()): Promise<LoggerModelView> {
  await refuseTakenName(body.name);
  const model = await sequelize.transaction(async (transaction) => {
    const created = await LoggerModel.create({ ...body }, { transaction });
    // Version 1 of its trust set: the keys registered now, as loggers of the model are made with them.
    await proposeTrustSet(sequelize, transaction, created.id, now());
    await recordActivity(transaction, ctx, {
      action: 'model.created',
      targetType: 'model',
      targetId: created.id,
      summary: `Model ${created.name} created with board revisions ${body.boards.map((b) => b.label).join(', ')}`,
    });
    return created;
  });
  return presentModel(ctx.actor, model, 0);
}

export async function updateModel(sequelize: Sequelize, ctx: RequestContext, id: string, body: UpdateModelRequest, now: () => Date = () => new Date()): Promise<LoggerModelView> {
  if (body.name !== undefined) await refuseTakenName(body.name, id);
  const model = await sequelize.transaction(async (transaction) => {
    const model = await LoggerModel.findByPk(id, { transaction, lock: transaction.LOCK.UPDATE });
    if (!model) throw problems.notFound('model');
    if (body.boards) {
      // A board revision that loggers carry cannot disappear: their labels, batches and releases name it.
      const kept = new Set(body.boards.map((b) => b.label.toLowerCase()));
      const removed = model.boards.filter((b) => !kept.has(b.label.toLowerCase())).map((b) => b.label);
      if (removed.length > 0) {
        const inUse = (await Logger.findAll({ attributes: ['board'], where: { modelId: id, board: removed }, group: ['board'], raw: true, transaction })) as unknown as {
          board: string;
        }[];
        if (inUse.length > 0) {
          throw problems.conflict(
            `Board revision ${inUse.map((r) => r.board).join(', ')} cannot be removed: loggers of ${model.name} are registered with it.`,
          );
        }
      }
    }
    const { signingThreshold, ...rest } = body;
    if (signingThreshold !== undefined && signingThreshold !== model.signingThreshold) {
      const keys = await SigningKey.count({ where: { state: { [Op.ne]: 'revoked' } }, transaction });
      if (signingThreshold > keys) {
        throw problems.unprocessable(`A threshold of ${signingThreshold} cannot be met: ${keys} signing key${keys === 1 ? ' is' : 's are'} registered and not revoked.`, [
          { path: 'signingThreshold', message: `at most ${keys}, the registered keys that are not revoked` },
        ]);
      }
      const before = model.signingThreshold;
      await model.update({ signingThreshold }, { transaction });
      const trust = await proposeTrustSet(sequelize, transaction, model.id, now());
      await recordActivity(transaction, ctx, {
        action: 'model.signing_threshold_changed',
        targetType: 'model',
        targetId: model.id,
        summary: `${ctx.actor.name} changed ${model.name}'s signing rule from ${before} to ${signingThreshold} of the registered keys${trust === 'proposed' ? '; a new trust set waits for signatures' : ''}`,
        details: { from: before, to: signingThreshold, trustSet: trust },
      });
    }
    const changed = (Object.keys(rest) as (keyof typeof rest)[]).filter((k) => rest[k] !== undefined);
    if (changed.length === 0) return model;
    await model.update(Object.fromEntries(changed.map((k) => [k, rest[k]])), { transaction });
    await recordActivity(transaction, ctx, {
      action: 'model.updated',
      targetType: 'model',
      targetId: model.id,
      summary: `Model ${model.name} updated: ${changed.join(', ')}`,
      details: { changed },
    });
    return model;
  });
  return presentModel(ctx.actor, model, (await loggerCounts([id])).get(id) ?? 0);
}
