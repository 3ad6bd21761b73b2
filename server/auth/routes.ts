import type { Request, Response } from 'express';
import type { Sequelize } from 'sequelize';
import { signInRequest, type SignInResponse } from '../../schemas/auth';
import type { Api } from '../http/api';
import { parse } from '../http/validate';
import { problems } from '../http/problem';
import { presentMe, presentUser, signIn } from './service';
import { sessionCookie, sessionTtlSeconds, signSession } from './session';

export function registerAuthRoutes(api: Api, deps: { sequelize: Sequelize; jwtSecret: string }) {
  api.post('/api/auth/sign-in', async (req: Request, res: Response) => {
    const body = parse(signInRequest, req.body);
    const user = await signIn(deps.sequelize, body.email, body.password, String(req.id ?? ''));
    res.cookie(sessionCookie, signSession(deps.jwtSecret, user.id, user.role), {
      httpOnly: true,
      sameSite: 'lax',
      secure: req.secure,
      maxAge: sessionTtlSeconds * 1000,
      path: '/',
    });
    const answer: SignInResponse = { user: presentUser(user) };
    res.json(answer);
  });

  api.post('/api/auth/sign-out', (req: Request, res: Response) => {
    res.clearCookie(sessionCookie, { path: '/', httpOnly: true, sameSite: 'lax', secure: req.secure });
    res.status(204).end();
  });

  api.get('/api/auth/me', (req: Request, res: Response) => {
    const actor = req.actor;
    if (actor?.type !== 'person') throw problems.forbidden('Only people have a profile; tokens do not.');
    res.json(presentMe(actor));
  });
}
