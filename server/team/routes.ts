import { z } from 'zod';
import type { Api } from '../http/api';
import { parse } from '../http/validate';
import { User } from '../db/models';
import { roleSchema } from '../../schemas/auth';
import { presentPerson } from '../auth/service';

const usersQuery = z.object({ role: roleSchema.optional() });

/** People on the team (read-only for now: used to assign integrators to sites). */
export function registerTeamRoutes(api: Api) {
  api.get('/api/users', async (req, res) => {
    const q = parse(usersQuery, req.query, 'query');
    const rows = await User.findAll({ where: { disabledAt: null, ...(q.role ? { role: q.role } : {}) }, order: [['name', 'ASC']] });
    res.json({ rows: rows.map(presentPerson), total: rows.length });
  });
}
