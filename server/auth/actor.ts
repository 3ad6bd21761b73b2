// Who is acting on a request: a person (session), an automation token, a logger, or the system.
import type { Role } from '../../schemas/auth';

export type Scope = 'images:write' | 'releases:write' | 'fleet:read' | 'metrics:read';

export type Actor =
  | {
      type: 'person';
      id: string;
      name: string;
      email: string;
      role: Role;
      /** Production asks this person for a second factor they have not set up: only setting it up is allowed. */
      mustSetUpSecondFactor?: boolean;
    }
  | { type: 'token'; id: string; name: string; scopes: Scope[] }
  | { type: 'logger'; id: string; name: string }
  | { type: 'system'; id: null; name: 'system' };

export const systemActor: Actor = { type: 'system', id: null, name: 'system' };

/** What a service needs to know about the request it serves. */
export type RequestContext = { actor: Actor; requestId: string | null };

export const systemContext = (requestId: string | null = null): RequestContext => ({ actor: systemActor, requestId });
