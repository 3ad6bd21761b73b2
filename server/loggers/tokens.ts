// Logger tokens (DEVICE_API.md, Authentication): `hlt_` + 43 base64url characters, shown once, stored only
// as the SHA-256 digest. The device API resolves its bearer tokens through findLoggerByToken.
import { Op, type Transaction } from 'sequelize';
import { Logger } from '../db/models';
import { digestToken, newToken, tokenPattern } from '../auth/tokens';

const loggerTokenPattern = tokenPattern('hlt_');

/** A fresh logger token and the digest to store; the clear token goes to the label and bench sheet only. */
export function issueLoggerToken(): { token: string; digest: string } {
  return newToken('hlt_');
}

/**
 * The logger a token belongs to, or null when the token is malformed, unknown, rotated away or its logger
 * is retired. Looked up by digest (unique index), so the clear token is never compared or stored.
 * A retired logger keeps its last digest only so the console can say "retired" rather than "unknown";
 * this function (and so the device API) treats it as revoked.
 */
export async function findLoggerByToken(token: string, transaction?: Transaction): Promise<Logger | null> {
  if (typeof token !== 'string' || !loggerTokenPattern.test(token)) return null;
  return Logger.findOne({ where: { tokenDigest: digestToken(token), status: { [Op.ne]: 'retired' } }, transaction });
}

/** The logger whose current token this is, whatever its status (for console messages); null when unknown. */
export async function findLoggerByTokenAnyStatus(token: string, transaction?: Transaction): Promise<Logger | null> {
  if (typeof token !== 'string' || !loggerTokenPattern.test(token)) return null;
  return Logger.findOne({ where: { tokenDigest: digestToken(token) }, transaction });
}
