// API tokens for automation (CI pipelines pushing signed images): `hat_` + 43 base64url characters,
// shown once, stored as the SHA-256 digest, limited to their scopes, revocable.
import { QueryTypes, type Sequelize } from 'sequelize';
import { ApiToken, User } from '../db/models';
import { problems } from '../http/problem';
import { recordActivity } from '../activity/service';
import type { Actor, RequestContext, Scope } from '../auth/actor';
import { digestToken, newToken, tokenPattern } from '../auth/tokens';
import { canOf } from '../auth/policies';
import type { CreateTokenRequest, CreatedToken, TokenView } from '../../schemas/tokens';

/** Last use is recorded at most once a minute per token, so busy automation does not write on every call. */
export const lastUseResolutionMs = 60_000;

export async function createToken(sequelize: Sequelize, ctx: RequestContext, input: CreateTokenRequest, now: Date): Promise<CreatedToken> {
  const expiresAt = new Date(input.expiresAt);
  if (expiresAt.getTime() <= now.getTime()) {
    throw problems.badRequest('The expiry must be in the future.', [{ path: 'expiresAt', message: 'must be in the future' }]);
  }
  const { token, digest } = newToken('hat_');
  const row = await sequelize.transaction(async (t) => {
    const created = await ApiToken.create(
      {
        name: input.name,
        tokenDigest: digest,
        scopes: input.scopes,
        expiresAt,
        createdBy: ctx.actor.type === 'person' ? ctx.actor.id : null,
        createdAt: now,
      },
      { transaction: t },
    );
    await recordActivity(t, ctx, {
      action: 'token.created',
      targetType: 'api_token',
      targetId: created.id,
      summary: `${ctx.actor.name} created API token "${created.name}" (${input.scopes.join(', ')}), expiring ${expiresAt.toISOString()}`,
    });
    return created;
  });
  return { id: row.id, token, name: row.name, scopes: row.scopes, expiresAt: row.expiresAt.toISOString() };
}

export async function listTokens(actor: Actor): Promise<{ rows: TokenView[]; total: number }> {
  const tokens = await ApiToken.findAll({ order: [['createdAt', 'DESC']] });
  const creatorIds = [...new Set(tokens.map((t) => t.createdBy).filter((id): id is string => id !== null))];
  const creators = new Map((await User.findAll({ where: { id: creatorIds } })).map((u) => [u.id, u.name]));
  const rows = tokens.map((t) => ({
    id: t.id,
    name: t.name,
    scopes: t.scopes,
    expiresAt: t.expiresAt.toISOString(),
    lastUsedAt: t.lastUsedAt ? t.lastUsedAt.toISOString() : null,
    createdAt: t.createdAt.toISOString(),
    revokedAt: t.revokedAt ? t.revokedAt.toISOString() : null,
    createdBy: t.createdBy ? { id: t.createdBy, name: creators.get(t.createdBy) ?? 'former member' } : null,
    can: canOf(actor, { kind: 'token', revoked: Boolean(t.revokedAt) }),
  }));
  return { rows, total: rows.length };
}

export async function revokeToken(sequelize: Sequelize, ctx: RequestContext, id: string, now: Date): Promise<void> {
  await sequelize.transaction(async (t) => {
    const token = await ApiToken.findByPk(id, { transaction: t, lock: t.LOCK.UPDATE });
    if (!token) throw problems.notFound('API token');
    if (token.revokedAt) return; // already revoked: nothing changes, nothing to record
    token.revokedAt = now;
    await token.save({ transaction: t });
    await recordActivity(t, ctx, {
      action: 'token.revoked',
      targetType: 'api_token',
      targetId: token.id,
      summary: `${ctx.actor.name} revoked API token "${token.name}"`,
    });
  });
}

const hatPattern = tokenPattern('hat_');

/** The actor behind an automation token, or null when it is unknown, revoked or expired (→ 401). */
export async function resolveApiToken(sequelize: Sequelize, token: string, now: Date): Promise<Actor | null> {
  if (!hatPattern.test(token)) return null;
  const row = await ApiToken.findOne({ where: { tokenDigest: digestToken(token) } });
  if (!row || row.revokedAt || row.expiresAt.getTime() <= now.getTime()) return null;
  if (!row.lastUsedAt || now.getTime() - row.lastUsedAt.getTime() >= lastUseResolutionMs) {
    // Conditional so that concurrent requests write once; no activity row: a use is not a change.
    await sequelize.query(
      `UPDATE api_tokens SET last_used_at = :now
        WHERE id = :id AND (last_used_at IS NULL OR last_used_at <= :now::timestamptz - interval '1 minute')`,
      { type: QueryTypes.UPDATE, replacements: { id: row.id, now: now.toISOString() } },
    );
  }
  return { type: 'token', id: row.id, name: row.name, scopes: row.scopes as Scope[] };
}
