// Sites: everyone reads (integrators only their assigned sites); admins and integrators create and edit.
import type { Sequelize } from 'sequelize';
import type { Api } from '../http/api';
import { parse } from '../http/validate';
import { contextOf } from '../http/context';
import { idParams } from '../../schemas/common';
import { createSiteRequest, sitesQuery, updateSiteRequest } from '../../schemas/sites';
import { createSite, getSite, listSites, updateSite } from './service';

export function registerSiteRoutes(api: Api, deps: { sequelize: Sequelize }) {
  api.get('/api/sites', async (req, res) => {
    const { q } = parse(sitesQuery, req.query, 'query');
    res.json(await listSites(contextOf(req).actor, q || undefined));
  });

  api.get('/api/sites/:id', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    res.json(await getSite(contextOf(req).actor, id));
  });

  api.post('/api/sites', async (req, res) => {
    const body = parse(createSiteRequest, req.body);
    res.status(201).json(await createSite(deps.sequelize, contextOf(req), body));
  });

  api.patch('/api/sites/:id', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    const body = parse(updateSiteRequest, req.body);
    res.json(await updateSite(deps.sequelize, contextOf(req), id, body));
  });
}
