import { z } from 'zod';
import type { Sequelize } from 'sequelize';
import { Op } from 'sequelize';
import type { Api } from '../http/api';
import { parse } from '../http/validate';
import { Activity } from '../db/models';
import type { ActivityView } from '../../schemas/activity';
import { contextOf } from '../http/context';
import { activity, authorize } from '../auth/policies';

const activityQuery = z.object({
  targetType: z.string().max(40).optional(),
  targetId: z.string().max(80).optional(),
  // The cursor: rows with a smaller id, written as the id the previous page ended on (digits, no sign or exponent).
  before: z
    .string()
    .regex(/^[1-9]\d{0,15}$/, 'must be the nextCursor of the previous page')
    .transform(Number)
    .refine(Number.isSafeInteger, 'must be the nextCursor of the previous page')
    .optional(),
  pageSize: z.coerce.number().int().min(1).max(200).default(50),
});

export function registerActivityRoutes(api: Api, _deps: { sequelize: Sequelize }) {
  api.get('/api/activity', async (req, res) => {
    authorize(contextOf(req).actor, 'read', activity);
    const q = parse(activityQuery, req.query, 'query');
    const where = {
      ...(q.targetType ? { targetType: q.targetType } : {}),
      ...(q.targetId ? { targetId: q.targetId } : {}),
    };
    const [rows, total] = await Promise.all([
      Activity.findAll({ where: { ...where, ...(q.before ? { id: { [Op.lt]: q.before } } : {}) }, order: [['id', 'DESC']], limit: q.pageSize }),
      Activity.count({ where }),
    ]);
    const last = rows[rows.length - 1];
    res.json({
      rows: rows.map((r): ActivityView => ({ ...r.toJSON(), at: r.at.toISOString() })),
      total,
      ...(rows.length === q.pageSize && last ? { nextCursor: String(last.id) } : {}),
    });
  });
}
