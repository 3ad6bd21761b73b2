// Logger models (hardware designs): everyone reads them; admins create and change them.
import type { Sequelize } from 'sequelize';
import type { Api } from '../http/api';
import { parse } from '../http/validate';
import { contextOf } from '../http/context';
import { idParams } from '../../schemas/common';
import { createModelRequest, updateModelRequest } from '../../schemas/models';
import { createModel, getModel, listModels, updateModel } from './service';

export function registerModelRoutes(api: Api, deps: { sequelize: Sequelize; now: () => Date }) {
  api.get('/api/models', async (req, res) => {
    res.json(await listModels(contextOf(req).actor));
  });

  api.get('/api/models/:id', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    res.json(await getModel(contextOf(req).actor, id));
  });

  api.post('/api/models', async (req, res) => {
    const body = parse(createModelRequest, req.body);
    res.status(201).json(await createModel(deps.sequelize, contextOf(req), body, deps.now));
  });

  api.patch('/api/models/:id', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    const body = parse(updateModelRequest, req.body);
    res.json(await updateModel(deps.sequelize, contextOf(req), id, body, deps.now));
  });
}
