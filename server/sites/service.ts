// Sites: where loggers are installed. Integrators create sites (and are assigned to those) and edit the
// sites assigned to them; admins edit any and assign the integrators (server/auth/policies.ts).
import { Op, fn, col, literal, type InferAttributes, type Sequelize, type Transaction, type WhereOptions } from 'sequelize';
import { Logger, Site, SiteIntegrator, User } from '../db/models';
import { recordActivity } from '../activity/service';
import { problems, type FieldError } from '../http/problem';
import type { Actor, RequestContext } from '../auth/actor';
import { authorize, canOf, siteScope, type SiteResource } from '../auth/policies';
import type { CreateSiteRequest, SiteView, UpdateSiteRequest } from '../../schemas/sites';

const isIntegrator = (actor: Actor) => actor.type === 'person' && actor.role === 'integrator';

/** What the policies read about a site: the integrators assigned to it. */
export async function siteResource(siteId: string, transaction?: Transaction): Promise<SiteResource> {
  const rows = await SiteIntegrator.findAll({ where: { siteId }, attributes: ['userId'], transaction });
  return { kind: 'site', integratorIds: rows.map((r) => r.userId) };
}

/** Escapes LIKE wildcards so a search for "50%" finds "50%" and not everything. */
export function likePattern(q: string): string {
  return `%${q.replace(/[\\%_]/g, (c) => `\\${c}`)}%`;
}

async function present(actor: Actor, sites: Site[], transaction?: Transaction): Promise<SiteView[]> {
  if (sites.length === 0) return [];
  const ids = sites.map((s) => s.id);
  const links = await SiteIntegrator.findAll({ where: { siteId: ids }, transaction });
  const people = await User.findAll({ where: { id: [...new Set(links.map((l) => l.userId))] }, attributes: ['id', 'name'], transaction });
  const nameOf = new Map(people.map((p) => [p.id, p.name]));
  const counts = (await Logger.findAll({
    attributes: ['siteId', [fn('count', col('id')), 'count']],
    where: { siteId: ids, status: { [Op.ne]: 'retired' } },
    group: ['siteId'],
    raw: true,
    transaction,
  })) as unknown as { siteId: string; count: number }[];
  const countOf = new Map(counts.map((c) => [c.siteId, Number(c.count)]));
  return sites.map((s) => {
    const integrators = links
      .filter((l) => l.siteId === s.id)
      .map((l) => ({ id: l.userId, name: nameOf.get(l.userId) ?? '' }))
      .sort((a, b) => a.name.localeCompare(b.name) || a.id.localeCompare(b.id));
    return {
      id: s.id,
      name: s.name,
      customer: s.customer,
      address: s.address,
      latitude: s.latitude === null ? null : Number(s.latitude),
      longitude: s.longitude === null ? null : Number(s.longitude),
      minTempC: s.minTempC === null || s.minTempC === undefined ? null : Number(s.minTempC),
      timeZone: s.timeZone,
      notes: s.notes,
      integratorIds: integrators.map((i) => i.id),
      integrators,
      loggerCount: countOf.get(s.id) ?? 0,
      createdAt: s.createdAt.toISOString(),
      can: canOf(actor, { kind: 'site', integratorIds: integrators.map((i) => i.id) }),
    };
  });
}

export async function listSites(actor: Actor, q?: string): Promise<{ rows: SiteView[]; total: number }> {
  const scope = siteScope(actor, '"Site".id');
  const conditions: WhereOptions[] = [literal(scope.sql)];
  if (q) {
    const like = likePattern(q);
    conditions.push({ [Op.or]: [{ name: { [Op.iLike]: like } }, { customer: { [Op.iLike]: like } }, { address: { [Op.iLike]: like } }] });
  }
  const sites = await Site.findAll({ where: { [Op.and]: conditions }, order: [['name', 'ASC'], ['id', 'ASC']], replacements: scope.replacements });
  return { rows: await present(actor, sites), total: sites.length };
}

export async function getSite(actor: Actor, id: string): Promise<SiteView> {
  const site = await Site.findByPk(id);
  if (!site) throw problems.notFound('site');
  authorize(actor, 'view', await siteResource(id));
  return (await present(actor, [site]))[0];
}

/** Every id must name an active integrator; errors point at the list position. */
async function checkIntegrators(ids: string[], transaction: Transaction) {
  const found = await User.findAll({ where: { id: ids, role: 'integrator', disabledAt: null }, attributes: ['id'], transaction });
  const ok = new Set(found.map((u) => u.id));
  const errors: FieldError[] = ids.flatMap((id, i) => (ok.has(id) ? [] : [{ path: `integratorIds.${i}`, message: 'is not an active integrator' }]));
  if (errors.length > 0) throw problems.badRequest('Check the body: integratorIds.', errors);
}

export async function createSite(sequelize: Sequelize, ctx: RequestContext, body: CreateSiteRequest): Promise<SiteView> {
  const { actor } = ctx;
  // An integrator who creates a site is assigned to it, so it appears in their list at once; naming
  // anyone else is assigning integrators, which only an admin does.
  const self = isIntegrator(actor) ? [actor.id!] : [];
  if ((body.integratorIds ?? []).some((id) => !self.includes(id))) authorize(actor, 'assignIntegrators', { kind: 'site', integratorIds: self });
  const integratorIds = [...new Set([...(body.integratorIds ?? []), ...self])];
  return sequelize.transaction(async (transaction) => {
    await checkIntegrators(integratorIds, transaction);
    const site = await Site.create(
      {
        name: body.name,
        customer: body.customer,
        address: body.address,
        latitude: body.latitude ?? null,
        longitude: body.longitude ?? null,
        minTempC: body.minTempC ?? null,
        timeZone: body.timeZone,
        notes: body.notes ?? '',
        createdBy: actor.type === 'person' ? actor.id : null,
      },
      { transaction },
    );
    await SiteIntegrator.bulkCreate(integratorIds.map((userId) => ({ siteId: site.id, userId })), { transaction });
    await recordActivity(transaction, ctx, {
      action: 'site.created',
      targetType: 'site',
      targetId: site.id,
      summary: `Site ${site.name} (${site.customer}) created`,
      details: { integratorIds },
    });
    return (await present(actor, [site], transaction))[0];
  });
}

export async function updateSite(sequelize: Sequelize, ctx: RequestContext, id: string, body: UpdateSiteRequest): Promise<SiteView> {
  const { actor } = ctx;
  return sequelize.transaction(async (transaction) => {
    const site = await Site.findByPk(id, { transaction, lock: transaction.LOCK.UPDATE });
    if (!site) throw problems.notFound('site');
    const resource = await siteResource(id, transaction);
    authorize(actor, 'edit', resource);

    const latitude = body.latitude !== undefined ? body.latitude : site.latitude;
    const longitude = body.longitude !== undefined ? body.longitude : site.longitude;
    if ((latitude === null) !== (longitude === null)) {
      const missing = latitude === null ? 'latitude' : 'longitude';
      throw problems.badRequest(`Check the body: ${missing}.`, [{ path: missing, message: `give the ${missing} too, or clear both` }]);
    }

    const changed: string[] = [];
    if (body.integratorIds !== undefined) {
      const same = body.integratorIds.length === resource.integratorIds.length && body.integratorIds.every((i) => resource.integratorIds.includes(i));
      if (!same) authorize(actor, 'assignIntegrators', resource);
      await checkIntegrators(body.integratorIds, transaction);
      await SiteIntegrator.destroy({ where: { siteId: id }, transaction });
      await SiteIntegrator.bulkCreate(body.integratorIds.map((userId) => ({ siteId: id, userId })), { transaction });
      changed.push('integratorIds');
    }
    const fields = ['name', 'customer', 'address', 'latitude', 'longitude', 'minTempC', 'timeZone', 'notes'] as const;
    const updates: Partial<Record<(typeof fields)[number], unknown>> = {};
    for (const f of fields) {
      if (body[f] !== undefined) {
        updates[f] = body[f];
        changed.push(f);
      }
    }
    await site.update(updates as Partial<InferAttributes<Site>>, { transaction });
    await recordActivity(transaction, ctx, {
      action: 'site.updated',
      targetType: 'site',
      targetId: site.id,
      summary: `Site ${site.name} updated: ${changed.join(', ')}`,
      details: { changed },
    });
    return (await present(actor, [site], transaction))[0];
  });
}
