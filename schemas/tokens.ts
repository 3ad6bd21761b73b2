// API tokens for automation: shown once, stored as SHA-256, limited to their scopes.
import { z } from 'zod';
import { text } from './common';

export const tokenScopes = ['images:write', 'releases:write', 'fleet:read', 'metrics:read'] as const;
export type TokenScope = (typeof tokenScopes)[number];
export const tokenScopeSchema = z.enum(tokenScopes, { error: `must be one of ${tokenScopes.join(', ')}` });

export const createTokenRequest = z.strictObject({
  name: text(80),
  scopes: z
    .array(tokenScopeSchema, { error: 'must be a list of scopes' })
    .min(1, 'choose at least one scope')
    .refine((s) => new Set(s).size === s.length, 'must not name a scope twice'),
  expiresAt: z.iso.datetime({ offset: true, error: 'must be an RFC 3339 time such as 2027-06-30T00:00:00Z' }),
});
export type CreateTokenRequest = z.infer<typeof createTokenRequest>;

/** The answer to POST /api/tokens: the only time the token text is shown. */
export type CreatedToken = { id: string; token: string; name: string; scopes: TokenScope[]; expiresAt: string };
/** What a person may do with an API token (its answers' `can`, from server/auth/policies.ts). */
export const TOKEN_VERBS = ['revoke'] as const;
export type TokenVerb = (typeof TOKEN_VERBS)[number];
export type TokenCan = Record<TokenVerb, boolean>;

/** One row of GET /api/tokens (never the token text). */
export type TokenView = {
  id: string;
  name: string;
  scopes: TokenScope[];
  expiresAt: string;
  lastUsedAt: string | null;
  createdAt: string;
  revokedAt: string | null;
  createdBy: { id: string; name: string } | null;
  can: TokenCan;
};
