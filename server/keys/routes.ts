import type { Sequelize } from 'sequelize';
import type { Api } from '../http/api';
import { parse } from '../http/validate';
import { contextOf } from '../http/context';
import { declareAccess, rules } from '../auth/access';
import { idParams } from '../../schemas/common';
import { registerKeyRequest } from '../../schemas/keys';
import { changeKeyState, listKeys, registerKey } from './service';

declareAccess({
  'GET /api/keys': rules.people(['admin', 'release_engineer']),
  'POST /api/keys': rules.people(['admin']),
  'POST /api/keys/:id/retire': rules.people(['admin']),
  'POST /api/keys/:id/revoke': rules.people(['admin']),
});

export function registerKeyRoutes(api: Api, deps: { sequelize: Sequelize; now: () => Date }) {
  api.get('/api/keys', async (req, res) => {
    res.json(await listKeys(deps.sequelize, contextOf(req).actor));
  });
  api.post('/api/keys', async (req, res) => {
    const body = parse(registerKeyRequest, req.body);
    res.status(201).json(await registerKey(deps.sequelize, contextOf(req), body, deps.now()));
  });
  for (const move of ['retire', 'revoke'] as const) {
    api.post(`/api/keys/:id/${move}`, async (req, res) => {
      const { id } = parse(idParams, req.params, 'path');
      res.json(await changeKeyState(deps.sequelize, contextOf(req), id, move, deps.now()));
    });
  }
}
