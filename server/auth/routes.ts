// Accounts over HTTP: sign-in (two steps when a second factor is on), sign-out, one's own account,
// password resets and the second factor. Handlers parse, call the service, set the cookie, answer.
import type { Request, Response } from 'express';
import {
  accountUpdateRequest,
  passwordChangeRequest,
  passwordResetConfirmRequest,
  passwordResetRequest,
  secondFactorConfirmRequest,
  secondFactorOffRequest,
  secondFactorSignInRequest,
  signInRequest,
  type Me,
  type RecoveryCodesAnswer,
  type SignInResponse,
} from '../../schemas/auth';
import type { Api } from '../http/api';
import { parse } from '../http/validate';
import { contextOf } from '../http/context';
import {
  changePassword,
  confirmPasswordReset,
  confirmSecondFactor,
  currentPerson,
  passwordStep,
  presentMe,
  rename,
  requestPasswordReset,
  resetAnswer,
  secondFactorStep,
  signOut,
  signOutEverywhere,
  startSecondFactor,
  turnOffSecondFactor,
  type AccountDeps,
  type IssuedSession,
} from './service';
import { sessionCookie } from './session';
import { decoyHash } from './passwords';

export const clientIp = (req: Request) => req.ip ?? req.socket.remoteAddress ?? 'unknown';
const requestIdOf = (req: Request) => (req.id === undefined ? null : String(req.id));
export const originOf = (req: Request) => `${req.protocol}://${req.get('host') ?? 'localhost'}`;

export function setSessionCookie(req: Request, res: Response, session: IssuedSession) {
  res.cookie(sessionCookie, session.token, {
    httpOnly: true,
    sameSite: 'lax',
    secure: req.secure,
    maxAge: session.ttlS * 1000,
    path: '/',
  });
}

export function clearSessionCookie(req: Request, res: Response) {
  res.clearCookie(sessionCookie, { path: '/', httpOnly: true, sameSite: 'lax', secure: req.secure });
}

export function registerAuthRoutes(api: Api, deps: AccountDeps) {
  // The decoy hash is made now, so the first unknown address is not slower than the rest.
  void decoyHash(deps.passwordCost);
  const production = deps.config.production;

  api.post('/api/auth/sign-in', async (req: Request, res: Response) => {
    const body = parse(signInRequest, req.body);
    const { user, session } = await passwordStep(deps, body.email, body.password, clientIp(req), requestIdOf(req));
    setSessionCookie(req, res, session);
    const answer: SignInResponse = session.stage === 'second_factor' ? { step: 'second_factor' } : { step: 'signed_in', user: presentMe(user, production) };
    res.json(answer);
  });

  api.post('/api/auth/sign-in/second-factor', async (req: Request, res: Response) => {
    const body = parse(secondFactorSignInRequest, req.body);
    const { user, session } = await secondFactorStep(deps, req.pendingSignIn, body, clientIp(req), requestIdOf(req));
    setSessionCookie(req, res, session);
    const answer: SignInResponse = { step: 'signed_in', user: presentMe(user, production) };
    res.json(answer);
  });

  api.post('/api/auth/sign-out', async (req: Request, res: Response) => {
    await signOut(deps, req.sessionId ?? req.pendingSignIn?.sessionId, req.actor, requestIdOf(req));
    clearSessionCookie(req, res);
    res.status(204).end();
  });

  api.post('/api/auth/sign-out-everywhere', async (req: Request, res: Response) => {
    await signOutEverywhere(deps, contextOf(req));
    clearSessionCookie(req, res);
    res.status(204).end();
  });

  api.get('/api/auth/me', async (req: Request, res: Response) => {
    const me: Me = presentMe(await currentPerson(contextOf(req)), production);
    res.json(me);
  });

  api.patch('/api/auth/me', async (req: Request, res: Response) => {
    const body = parse(accountUpdateRequest, req.body);
    const me: Me = presentMe(await rename(deps, contextOf(req), body.name), production);
    res.json(me);
  });

  api.post('/api/auth/password', async (req: Request, res: Response) => {
    const body = parse(passwordChangeRequest, req.body);
    const { user, session } = await changePassword(deps, contextOf(req), body, clientIp(req));
    setSessionCookie(req, res, session);
    const me: Me = presentMe(user, production);
    res.json(me);
  });

  api.post('/api/auth/password-reset', async (req: Request, res: Response) => {
    const body = parse(passwordResetRequest, req.body);
    await requestPasswordReset(deps, body.email, clientIp(req), originOf(req), requestIdOf(req));
    res.status(202).json({ detail: resetAnswer });
  });

  api.post('/api/auth/password-reset/confirm', async (req: Request, res: Response) => {
    const body = parse(passwordResetConfirmRequest, req.body);
    await confirmPasswordReset(deps, body.token, body.password, requestIdOf(req));
    res.json({ detail: 'Your new password is set. Sign in with it; every earlier session has ended.' });
  });

  api.post('/api/auth/second-factor/setup', async (req: Request, res: Response) => {
    res.json(await startSecondFactor(deps, contextOf(req)));
  });

  api.post('/api/auth/second-factor/confirm', async (req: Request, res: Response) => {
    const body = parse(secondFactorConfirmRequest, req.body);
    const { user, codes, session } = await confirmSecondFactor(deps, contextOf(req), body.code, clientIp(req));
    setSessionCookie(req, res, session);
    const answer: RecoveryCodesAnswer = { recoveryCodes: codes, user: presentMe(user, production) };
    res.json(answer);
  });

  api.delete('/api/auth/second-factor', async (req: Request, res: Response) => {
    const body = parse(secondFactorOffRequest, req.body);
    const { user, session } = await turnOffSecondFactor(deps, contextOf(req), body.password, clientIp(req));
    setSessionCookie(req, res, session);
    const me: Me = presentMe(user, production);
    res.json(me);
  });
}
