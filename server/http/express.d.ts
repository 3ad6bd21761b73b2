import type { Actor } from '../auth/actor';

declare global {
  namespace Express {
    interface Request {
      actor?: Actor;
      /** true when the actor came from the session cookie (CSRF header required on writes) */
      viaSessionCookie?: boolean;
      /** The server-side session behind the cookie, when it is live. */
      sessionId?: string;
      /** The password was right but the second-factor code is still to come (no actor until it is). */
      pendingSignIn?: { sessionId: string; userId: string };
    }
  }
}
export {};
