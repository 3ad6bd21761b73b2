// Named queries for sessions, one-time links and recovery codes (the tables of migration 0009).
import crypto from 'node:crypto';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import type { Role } from '../../schemas/auth';
import { digestToken } from './tokens';

export type SessionStage = 'full' | 'second_factor';

export type SessionRow = { sessionId: string; stage: SessionStage; userId: string; name: string; email: string; role: Role; secondFactorOn: boolean };

/** A live session with its person: not revoked, not expired, and the person joined and not disabled. */
export async function findLiveSession(sequelize: Sequelize, sessionId: string, userId: string, now: Date): Promise<SessionRow | null> {
  const [row] = await sequelize.query<SessionRow>(
    `SELECT s.id AS "sessionId", s.stage, u.id AS "userId", u.name, u.email, u.role, (u.totp_enabled_at IS NOT NULL) AS "secondFactorOn"
       FROM sessions s JOIN users u ON u.id = s.user_id
      WHERE s.id = :sessionId AND s.user_id = :userId AND s.revoked_at IS NULL AND s.expires_at > :now
        AND u.disabled_at IS NULL AND u.joined_at IS NOT NULL`,
    { type: QueryTypes.SELECT, replacements: { sessionId, userId, now } },
  );
  return row ?? null;
}

export async function createSession(sequelize: Sequelize, userId: string, stage: SessionStage, now: Date, ttlS: number, transaction?: Transaction) {
  const expiresAt = new Date(now.getTime() + ttlS * 1000);
  const [row] = await sequelize.query<{ id: string }>(
    `INSERT INTO sessions (user_id, stage, created_at, expires_at) VALUES (:userId, :stage, :now, :expiresAt) RETURNING id`,
    { type: QueryTypes.SELECT, replacements: { userId, stage, now, expiresAt }, transaction },
  );
  // Sessions that ended more than a day ago are of no further use.
  await sequelize.query(`DELETE FROM sessions WHERE user_id = :userId AND (expires_at < :old OR revoked_at < :old)`, {
    replacements: { userId, old: new Date(now.getTime() - 86_400_000) },
    transaction,
  });
  return { id: row.id, expiresAt };
}

export async function revokeSession(sequelize: Sequelize, sessionId: string, now: Date, transaction?: Transaction) {
  await sequelize.query(`UPDATE sessions SET revoked_at = :now WHERE id = :sessionId AND revoked_at IS NULL`, { replacements: { sessionId, now }, transaction });
}

/** Ends every session of a person (at their next request); returns how many were live. */
export async function revokeSessionsOf(sequelize: Sequelize, userId: string, now: Date, transaction: Transaction): Promise<number> {
  const rows = await sequelize.query<{ id: string }>(
    `UPDATE sessions SET revoked_at = :now WHERE user_id = :userId AND revoked_at IS NULL AND expires_at > :now RETURNING id`,
    { type: QueryTypes.SELECT, replacements: { userId, now }, transaction },
  );
  return rows.length;
}

// ─── One-time links ─────────────────────────────────────────────────────────

export type LinkPurpose = 'invitation' | 'password_reset';
const prefixOf: Record<LinkPurpose, 'hiv_' | 'hpr_'> = { invitation: 'hiv_', password_reset: 'hpr_' };

/** A new link token (32 random bytes), stored only as its SHA-256 digest; earlier open links of the same purpose stop working. */
export async function createLink(
  sequelize: Sequelize,
  t: Transaction,
  input: { userId: string; purpose: LinkPurpose; createdBy: string | null; now: Date; ttlS: number },
): Promise<{ token: string; expiresAt: Date }> {
  const token = prefixOf[input.purpose] + crypto.randomBytes(32).toString('base64url');
  const expiresAt = new Date(input.now.getTime() + input.ttlS * 1000);
  await sequelize.query(
    `UPDATE one_time_links SET revoked_at = :now WHERE user_id = :userId AND purpose = :purpose AND used_at IS NULL AND revoked_at IS NULL`,
    { replacements: { userId: input.userId, purpose: input.purpose, now: input.now }, transaction: t },
  );
  await sequelize.query(
    `INSERT INTO one_time_links (user_id, purpose, token_digest, created_by, created_at, expires_at)
     VALUES (:userId, :purpose, :digest, :createdBy, :now, :expiresAt)`,
    { replacements: { ...input, digest: digestToken(token), expiresAt }, transaction: t },
  );
  return { token, expiresAt };
}

export type LinkRow = { id: string; userId: string; createdBy: string | null; expiresAt: Date; usedAt: Date | null; revokedAt: Date | null };

/** The link a token names, locked for the transaction when one is given. */
export async function findLink(sequelize: Sequelize, token: string, purpose: LinkPurpose, t?: Transaction): Promise<LinkRow | null> {
  const [row] = await sequelize.query<LinkRow>(
    `SELECT id, user_id AS "userId", created_by AS "createdBy", expires_at AS "expiresAt", used_at AS "usedAt", revoked_at AS "revokedAt"
       FROM one_time_links WHERE token_digest = :digest AND purpose = :purpose ${t ? 'FOR UPDATE' : ''}`,
    { type: QueryTypes.SELECT, replacements: { digest: digestToken(token), purpose }, transaction: t },
  );
  return row ?? null;
}

export const linkIsOpen = (link: LinkRow, now: Date) => !link.usedAt && !link.revokedAt && link.expiresAt.getTime() > now.getTime();

export async function useLink(sequelize: Sequelize, linkId: string, now: Date, t: Transaction) {
  await sequelize.query(`UPDATE one_time_links SET used_at = :now WHERE id = :linkId`, { replacements: { linkId, now }, transaction: t });
}

/** When each invited person's open invitation link stops working. */
export async function openInvitations(sequelize: Sequelize, now: Date): Promise<Map<string, Date>> {
  const rows = await sequelize.query<{ userId: string; expiresAt: Date }>(
    `SELECT user_id AS "userId", max(expires_at) AS "expiresAt" FROM one_time_links
      WHERE purpose = 'invitation' AND used_at IS NULL AND revoked_at IS NULL AND expires_at > :now GROUP BY user_id`,
    { type: QueryTypes.SELECT, replacements: { now } },
  );
  return new Map(rows.map((r) => [r.userId, new Date(r.expiresAt)]));
}

// ─── Recovery codes ─────────────────────────────────────────────────────────

const base32 = 'abcdefghijklmnopqrstuvwxyz234567';

/** Ten codes of 16 base32 characters (80 random bits each), shown as four groups of four. */
export function newRecoveryCodes(): string[] {
  return Array.from({ length: 10 }, () => {
    const bytes = crypto.randomBytes(16);
    const chars = Array.from(bytes, (b) => base32[b & 31]).join('');
    return chars.match(/.{4}/g)!.join('-');
  });
}

export const normalRecoveryCode = (code: string) => code.toLowerCase().replace(/[\s-]+/g, '');

export async function replaceRecoveryCodes(sequelize: Sequelize, userId: string, codes: string[], now: Date, t: Transaction) {
  await sequelize.query(`DELETE FROM recovery_codes WHERE user_id = :userId`, { replacements: { userId }, transaction: t });
  for (const code of codes) {
    await sequelize.query(`INSERT INTO recovery_codes (user_id, code_digest, created_at) VALUES (:userId, :digest, :now)`, {
      replacements: { userId, digest: digestToken(normalRecoveryCode(code)), now },
      transaction: t,
    });
  }
}

/** Uses up one recovery code; returns how many are left, or null when the code is not one of theirs (or was used). */
export async function useRecoveryCode(sequelize: Sequelize, userId: string, code: string, now: Date, t: Transaction): Promise<number | null> {
  const used = await sequelize.query<{ id: number }>(
    `UPDATE recovery_codes SET used_at = :now WHERE user_id = :userId AND code_digest = :digest AND used_at IS NULL RETURNING id`,
    { type: QueryTypes.SELECT, replacements: { userId, digest: digestToken(normalRecoveryCode(code)), now }, transaction: t },
  );
  if (used.length === 0) return null;
  const [{ left }] = await sequelize.query<{ left: number }>(`SELECT count(*)::int AS "left" FROM recovery_codes WHERE user_id = :userId AND used_at IS NULL`, {
    type: QueryTypes.SELECT,
    replacements: { userId },
    transaction: t,
  });
  return left;
}
