// Resolves the actor of each request and enforces the CSRF header on cookie-authenticated writes.
import type { NextFunction, Request, RequestHandler, Response } from 'express';
import { User } from '../db/models';
import { problems } from '../http/problem';
import type { Actor } from './actor';
import { sessionCookie, verifySession } from './session';

/** Resolves "Authorization: Bearer <token>" for tokens with a known prefix (e.g. hat_ automation tokens). */
export type BearerResolver = (token: string) => Promise<Actor | null>;
const bearerResolvers: { prefix: string; resolve: BearerResolver }[] = [];

export function registerBearerResolver(prefix: string, resolve: BearerResolver) {
  bearerResolvers.push({ prefix, resolve });
}

const writeMethods = new Set(['POST', 'PUT', 'PATCH', 'DELETE']);

export function authenticate(jwtSecret: string): RequestHandler {
  return async (req: Request, _res: Response, next: NextFunction) => {
    try {
      const header = req.get('authorization');
      if (header?.startsWith('Bearer ')) {
        const token = header.slice(7).trim();
        const resolver = bearerResolvers.find((r) => token.startsWith(r.prefix));
        // Device tokens (hlt_) are resolved by the device API itself.
        if (resolver) {
          const actor = await resolver.resolve(token);
          if (!actor) return next(problems.unauthorized('The API token is unknown, revoked or expired.'));
          req.actor = actor;
        }
        return next();
      }
      const cookie = req.cookies?.[sessionCookie];
      if (typeof cookie === 'string' && cookie) {
        const claims = verifySession(jwtSecret, cookie);
        if (claims) {
          const user = await User.findByPk(claims.sub);
          if (user && !user.disabledAt) {
            req.actor = { type: 'person', id: user.id, name: user.name, email: user.email, role: user.role };
            req.viaSessionCookie = true;
          }
        }
      }
      if (req.viaSessionCookie && writeMethods.has(req.method) && req.get('x-requested-with') !== 'heliodor') {
        return next(problems.forbidden('Requests from the console must carry the header "X-Requested-With: heliodor".'));
      }
      return next();
    } catch (err) {
      return next(err);
    }
  };
}
