// The activity log: every mutation by a person, token, logger or the system writes one row,
// inside the same transaction as the change it describes.
import type { Transaction } from 'sequelize';
import { Activity } from '../db/models';
import type { RequestContext } from '../auth/actor';
import type { ActivityAction } from '../../schemas/words';

export type ActivityEntry = {
  action: ActivityAction;
  targetType: string; // e.g. "logger", "site", "release"
  targetId?: string | null;
  summary: string; // one plain sentence a support person can read
  details?: Record<string, unknown>;
};

export async function recordActivity(transaction: Transaction, ctx: RequestContext, entry: ActivityEntry) {
  await Activity.create(
    {
      actorType: ctx.actor.type,
      actorId: ctx.actor.id,
      actorName: ctx.actor.name,
      action: entry.action,
      targetType: entry.targetType,
      targetId: entry.targetId ?? null,
      summary: entry.summary,
      requestId: ctx.requestId,
      details: entry.details ?? null,
    },
    { transaction },
  );
}
