// Resolves the actor of each request and enforces the CSRF header on cookie-authenticated writes.
import type { NextFunction, Request, RequestHandler, Response } from 'express';
import type { Sequelize } from 'sequelize';
import { needsSecondFactor } from '../../schemas/auth';
import { problems } from '../http/problem';
import type { Actor } from './actor';
import { sessionCookie, verifySession } from './session';
import { findLiveSession } from './store';

/** Resolves "Authorization: Bearer <token>" for tokens with a known prefix (e.g. hat_ automation tokens). */
export type BearerResolver = (token: string) => Promise<Actor | null>;
const bearerResolvers: { prefix: string; resolve: BearerResolver }[] = [];

export function registerBearerResolver(prefix: string, resolve: BearerResolver) {
  bearerResolvers.push({ prefix, resolve });
}

const writeMethods = new Set(['POST', 'PUT', 'PATCH', 'DELETE']);

/**
 * The session cookie counts only while its server-side session is live and its person joined and is not
 * disabled: signing out, disabling, a role change, a new password or a second factor turned off end it
 * at the next request. A malformed, unsigned, expired or `exp`-less token, or one naming an unknown
 * person, is simply no session (so people routes answer 401).
 */
export function authenticate(deps: { jwtSecret: string; production: boolean; sequelize: Sequelize; now: () => Date }): RequestHandler {
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
        const now = deps.now();
        const claims = verifySession(deps.jwtSecret, cookie, now);
        const session = claims ? await findLiveSession(deps.sequelize, claims.sid, claims.sub, now) : null;
        if (session?.stage === 'full') {
          req.actor = {
            type: 'person',
            id: session.userId,
            name: session.name,
            email: session.email,
            role: session.role,
            ...(deps.production && needsSecondFactor(session.role) && !session.secondFactorOn ? { mustSetUpSecondFactor: true } : {}),
          };
          req.sessionId = session.sessionId;
          req.viaSessionCookie = true;
        } else if (session?.stage === 'second_factor') {
          req.pendingSignIn = { sessionId: session.sessionId, userId: session.userId };
          req.viaSessionCookie = true;
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
