import type { Api } from '../http/api';
import { parse } from '../http/validate';
import { contextOf } from '../http/context';
import { declareAccess, rules } from '../auth/access';
import { idParams } from '../../schemas/common';
import { addSignatureRequest, estimateQuery, patchReleaseRequest, releaseListQuery, releaseSitesQuery, resignRequest, transitionRequest } from '../../schemas/releases';
import type { AppServices } from '../app';
import { LocalImageStore, type ImageStore } from '../images/store';
import { releaseUploadMiddleware, uploadPartsOf } from '../images/upload';
import { listReleaseRows, releaseFor } from './presenter';
import { releaseDashboard, releaseSites } from './dashboard';
import { addReleaseSignature, createRelease, deleteRelease, estimateShare, getRelease, patchRelease, resignRelease, transitionRelease, type ReleaseDeps } from './service';

const engineers = ['admin', 'release_engineer'] as const;
declareAccess({
  'POST /api/releases': rules.people(engineers, ['images:write']),
  'GET /api/releases': rules.people(rules.everyone, ['fleet:read']),
  'GET /api/releases/:id': rules.people(rules.everyone, ['fleet:read']),
  'GET /api/releases/:id/estimate': rules.people(rules.everyone, ['fleet:read']),
  'GET /api/releases/:id/dashboard': rules.people(rules.everyone, ['fleet:read']),
  'GET /api/releases/:id/sites': rules.people(rules.everyone, ['fleet:read']),
  'PATCH /api/releases/:id': rules.people(engineers, ['releases:write']),
  'DELETE /api/releases/:id': rules.people(engineers),
  'POST /api/releases/:id/transitions': rules.people(engineers, ['releases:write']),
  // Signing: further signatures on a draft, and a new manifest (a later expiry) for a release.
  'POST /api/releases/:id/signatures': rules.people(engineers, ['images:write']),
  'PUT /api/releases/:id/manifest': rules.people(engineers, ['images:write']),
});

export function registerReleaseRoutes(api: Api, services: AppServices, store: ImageStore = new LocalImageStore(services.config.storeDir)) {
  const deps: ReleaseDeps = { sequelize: services.sequelize, store, now: services.now, mailer: services.mailer, logger: services.logger };

  api.post('/api/releases', releaseUploadMiddleware(store, services.config.imageLimitBytes), async (req, res) => {
    const files = req.files as Record<string, { received?: { discard(): Promise<void> } }[]> | undefined;
    const image = files?.image?.[0]?.received;
    try {
      const ctx = contextOf(req);
      res.status(201).json(releaseFor(ctx.actor, await createRelease(deps, ctx, uploadPartsOf(req))));
    } finally {
      // A refused upload leaves nothing behind; after a commit this does nothing.
      await image?.discard();
    }
  });

  api.get('/api/releases', async (req, res) => {
    res.json(await listReleaseRows(services.sequelize, parse(releaseListQuery, req.query, 'query')));
  });

  api.get('/api/releases/:id', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    res.json(releaseFor(contextOf(req).actor, await getRelease(deps, id)));
  });

  api.get('/api/releases/:id/estimate', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    const { share } = parse(estimateQuery, req.query, 'query');
    res.json(await estimateShare(deps, id, share));
  });

  api.get('/api/releases/:id/dashboard', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    res.json(await releaseDashboard(deps, contextOf(req).actor, id));
  });

  api.get('/api/releases/:id/sites', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    res.json(await releaseSites(deps, contextOf(req).actor, id, parse(releaseSitesQuery, req.query, 'query')));
  });

  api.patch('/api/releases/:id', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    const ctx = contextOf(req);
    res.json(releaseFor(ctx.actor, await patchRelease(deps, ctx, id, parse(patchReleaseRequest, req.body))));
  });

  api.delete('/api/releases/:id', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    await deleteRelease(deps, contextOf(req), id);
    res.status(204).end();
  });

  api.post('/api/releases/:id/transitions', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    const ctx = contextOf(req);
    res.json(releaseFor(ctx.actor, await transitionRelease(deps, ctx, id, parse(transitionRequest, req.body))));
  });

  api.post('/api/releases/:id/signatures', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    const ctx = contextOf(req);
    res.json(releaseFor(ctx.actor, await addReleaseSignature(deps, ctx, id, parse(addSignatureRequest, req.body))));
  });

  api.put('/api/releases/:id/manifest', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    const ctx = contextOf(req);
    res.json(releaseFor(ctx.actor, await resignRelease(deps, ctx, id, parse(resignRequest, req.body))));
  });
}
