import type { Sequelize } from 'sequelize';
import type { Api } from '../http/api';
import { parse } from '../http/validate';
import { contextOf } from '../http/context';
import { declareAccess, rules } from '../auth/access';
import { registerBearerResolver } from '../auth/middleware';
import { idParams } from '../../schemas/common';
import { createTokenRequest } from '../../schemas/tokens';
import { createToken, listTokens, resolveApiToken, revokeToken } from './service';

declareAccess({
  'POST /api/tokens': rules.people(['admin']),
  'GET /api/tokens': rules.people(['admin']),
  'DELETE /api/tokens/:id': rules.people(['admin']),
});

// The bearer resolver is process-wide (server/auth/middleware.ts); it uses the most recently built
// app's database and clock, which in every process is the only one.
let current: { sequelize: Sequelize; now: () => Date } | null = null;
registerBearerResolver('hat_', (token) => (current ? resolveApiToken(current.sequelize, token, current.now()) : Promise.resolve(null)));

export function registerTokenRoutes(api: Api, deps: { sequelize: Sequelize; now: () => Date }) {
  current = deps;
  api.post('/api/tokens', async (req, res) => {
    const body = parse(createTokenRequest, req.body);
    res.status(201).json(await createToken(deps.sequelize, contextOf(req), body, deps.now()));
  });
  api.get('/api/tokens', async (req, res) => {
    res.json(await listTokens(contextOf(req).actor));
  });
  api.delete('/api/tokens/:id', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    await revokeToken(deps.sequelize, contextOf(req), id, deps.now());
    res.status(204).end();
  });
}
