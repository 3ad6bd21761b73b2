import type { Actor } from '../auth/actor';

declare global {
  namespace Express {
    interface Request {
      actor?: Actor;
      /** true when the actor came from the session cookie (CSRF header required on writes) */
      viaSessionCookie?: boolean;
    }
  }
}
export {};
