// Route registration that cannot forget authorization: every route is looked up in the access table.
import type { NextFunction, Request, RequestHandler, Response, Router } from 'express';
import { ruleFor, type Rule } from '../auth/access';
import { Problem } from './problem';

type Method = 'get' | 'post' | 'patch' | 'put' | 'delete';
export type Api = Record<Method, (path: string, ...handlers: RequestHandler[]) => void>;

/** The guard's own refusals, with problem types of their own so a client (and the access matrix test) can tell them from a handler's. */
export const guardProblems = {
  signInRequired: () => new Problem(401, 'sign-in-required', 'Not signed in', 'Sign in to continue.', { headers: { 'WWW-Authenticate': 'Bearer' } }),
  roleNotAllowed: () => new Problem(403, 'not-allowed', 'Not allowed', 'Your role does not allow this action.'),
  secondFactorFirst: () =>
    new Problem(403, 'second-factor-setup-required', 'Set up a second factor first', 'Your role can ship firmware: set up a second factor on your account before anything else.'),
};

export function guard(rule: Rule): RequestHandler {
  return (req: Request, _res: Response, next: NextFunction) => {
    if (rule.kind === 'public' || rule.kind === 'device') return next();
    const actor = req.actor;
    if (!actor) return next(guardProblems.signInRequired());
    if (actor.type === 'person' && rule.roles.includes(actor.role)) {
      if (actor.mustSetUpSecondFactor && !rule.beforeSecondFactor) return next(guardProblems.secondFactorFirst());
      return next();
    }
    if (actor.type === 'token' && rule.scopes?.some((s) => actor.scopes.includes(s))) return next();
    return next(guardProblems.roleNotAllowed());
  };
}

export function createApi(router: Router): Api {
  const register = (method: Method) => (path: string, ...handlers: RequestHandler[]) => {
    const rule = ruleFor(method, path);
    if (!rule) throw new Error(`no access rule for ${method.toUpperCase()} ${path}: add a row in server/auth/access.ts`);
    router[method](path, guard(rule), ...handlers);
  };
  return { get: register('get'), post: register('post'), patch: register('patch'), put: register('put'), delete: register('delete') };
}
