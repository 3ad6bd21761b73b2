// Route registration that cannot forget authorization: every route is looked up in the access table.
import type { NextFunction, Request, RequestHandler, Response, Router } from 'express';
import { ruleFor, type Rule } from '../auth/access';
import { problems } from './problem';

type Method = 'get' | 'post' | 'patch' | 'put' | 'delete';
export type Api = Record<Method, (path: string, ...handlers: RequestHandler[]) => void>;

export function guard(rule: Rule): RequestHandler {
  return (req: Request, _res: Response, next: NextFunction) => {
    if (rule.kind === 'public' || rule.kind === 'device') return next();
    const actor = req.actor;
    if (!actor) return next(problems.unauthorized());
    if (actor.type === 'person' && rule.roles.includes(actor.role)) return next();
    if (actor.type === 'token' && rule.scopes?.some((s) => actor.scopes.includes(s))) return next();
    return next(problems.forbidden());
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
