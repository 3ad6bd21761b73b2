import type { Request } from 'express';
import type { RequestContext } from '../auth/actor';
import { problems } from './problem';

/** The service context of a request: who acts and the request id for the activity log. */
export function contextOf(req: Request): RequestContext {
  if (!req.actor) throw problems.unauthorized();
  return { actor: req.actor, requestId: typeof req.id === 'string' ? req.id : String(req.id ?? '') };
}
