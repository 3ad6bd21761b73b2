// The team over HTTP: the admin's list and changes, and the invitee's link. People as other screens
// list them (e.g. integrators to assign to a site) stay at GET /api/users.
import { z } from 'zod';
import type { Request, Response } from 'express';
import type { Api } from '../http/api';
import { parse } from '../http/validate';
import { contextOf } from '../http/context';
import { idParams } from '../../schemas/common';
import { roleSchema } from '../../schemas/auth';
import { invitationAcceptRequest, invitationLookupRequest, invitationRequest, teamMemberPatch } from '../../schemas/team';
import { User } from '../db/models';
import { presentMe, presentPerson, type AccountDeps } from '../auth/service';
import { originOf, setSessionCookie } from '../auth/routes';
import { acceptInvitation, changeMember, invite, listTeam, lookUpInvitation, resendInvitation, resetMemberSecondFactor, revokeInvitation } from './service';
import { Op } from 'sequelize';

const usersQuery = z.object({ role: roleSchema.optional() });
const requestIdOf = (req: Request) => (req.id === undefined ? null : String(req.id));

export function registerTeamRoutes(api: Api, deps: AccountDeps) {
  /** People who have joined and are not disabled (e.g. integrators to assign to a site). */
  api.get('/api/users', async (req, res) => {
    const q = parse(usersQuery, req.query, 'query');
    const rows = await User.findAll({ where: { disabledAt: null, joinedAt: { [Op.ne]: null }, ...(q.role ? { role: q.role } : {}) }, order: [['name', 'ASC']] });
    res.json({ rows: rows.map(presentPerson), total: rows.length });
  });

  api.get('/api/team', async (_req, res) => {
    res.json(await listTeam(deps.sequelize, deps.now()));
  });

  api.post('/api/team/invitations', async (req: Request, res: Response) => {
    const body = parse(invitationRequest, req.body);
    res.status(201).json(await invite(deps, contextOf(req), body, originOf(req)));
  });

  api.post('/api/team/:id/invitation', async (req: Request, res: Response) => {
    const { id } = parse(idParams, req.params, 'path');
    res.json(await resendInvitation(deps, contextOf(req), id, originOf(req)));
  });

  api.delete('/api/team/:id/invitation', async (req: Request, res: Response) => {
    const { id } = parse(idParams, req.params, 'path');
    await revokeInvitation(deps, contextOf(req), id);
    res.status(204).end();
  });

  api.patch('/api/team/:id', async (req: Request, res: Response) => {
    const { id } = parse(idParams, req.params, 'path');
    const body = parse(teamMemberPatch, req.body);
    res.json(await changeMember(deps, contextOf(req), id, body));
  });

  api.delete('/api/team/:id/second-factor', async (req: Request, res: Response) => {
    const { id } = parse(idParams, req.params, 'path');
    res.json(await resetMemberSecondFactor(deps, contextOf(req), id));
  });

  api.post('/api/invitations/lookup', async (req: Request, res: Response) => {
    const body = parse(invitationLookupRequest, req.body);
    res.json(await lookUpInvitation(deps.sequelize, body.token, deps.now()));
  });

  api.post('/api/invitations/accept', async (req: Request, res: Response) => {
    const body = parse(invitationAcceptRequest, req.body);
    const { user, session } = await acceptInvitation(deps, body, requestIdOf(req));
    setSessionCookie(req, res, session);
    res.status(201).json({ user: presentMe(user, deps.config.production) });
  });
}
