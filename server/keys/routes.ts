import type { Sequelize } from 'sequelize';
import type { Api } from '../http/api';
import { parse } from '../http/validate';
import { contextOf } from '../http/context';
import { declareAccess, rules } from '../auth/access';
import { idParams } from '../../schemas/common';
import { registerKeyRequest, trustSignatureRequest } from '../../schemas/keys';
import { changeKeyState, listKeys, registerKey } from './service';
import { signTrustSet, trustSetsView } from './trust-sets';

const signers = ['admin', 'release_engineer'] as const;
declareAccess({
  'GET /api/keys': rules.people(signers),
  'POST /api/keys': rules.people(['admin']),
  'POST /api/keys/:id/retire': rules.people(['admin']),
  'POST /api/keys/:id/revoke': rules.people(['admin']),
  // A model's trust set: the people who hold signing keys read it and add their signatures.
  'GET /api/models/:id/trust': rules.people(signers),
  'POST /api/models/:id/trust/signatures': rules.people(signers),
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
  api.get('/api/models/:id/trust', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    res.json(await trustSetsView(deps.sequelize, id));
  });
  api.post('/api/models/:id/trust/signatures', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    const body = parse(trustSignatureRequest, req.body);
    res.json(await signTrustSet(deps.sequelize, contextOf(req), id, body, deps.now()));
  });
}
