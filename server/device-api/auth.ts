// Logger bearer tokens (DEVICE_API.md "Authentication"): `hlt_` + 43 base64url characters, stored only
// as their SHA-256 digest. The token is hashed and looked up by its digest through a unique index, so
// no secret is ever compared byte by byte with a stored one; the digest found is still compared with
// the computed one in constant time (sameDigest), which costs nothing and keeps the rule simple.
import type { Request } from 'express';
import type { Sequelize } from 'sequelize';
import { QueryTypes } from 'sequelize';
import { digestToken, sameDigest, tokenPattern } from '../auth/tokens';
import { problems } from '../http/problem';
import type { Channel, LoggerStatus } from '../../schemas/words';

/** The logger behind a device request, with what its model and site contribute to a check-in. */
export type DeviceLogger = {
  id: string;
  serial: string;
  status: LoggerStatus;
  modelId: string;
  siteId: string | null;
  board: string;
  channel: Channel;
  supplyV: number | null;
  minUpdateSupplyV: number;
  checkInIntervalS: number;
  latitude: number | null;
  longitude: number | null;
  /** The previous check-in, which this one's energy reading counts from (the measurement-drift days). */
  lastCheckInAt: Date | null;
};

const LOGGER_TOKEN = tokenPattern('hlt_');

/** The bearer token of a request, or null when there is none. */
export function bearerToken(req: Request): string | null {
  const header = req.get('authorization');
  if (!header) return null;
  const m = /^Bearer[ \t]+(\S+)[ \t]*$/i.exec(header);
  return m ? m[1] : null;
}

/** The token digest a device request is keyed by (rate limits), or null. */
export function tokenDigestOf(req: Request): string | null {
  const token = bearerToken(req);
  return token && LOGGER_TOKEN.test(token) ? digestToken(token) : null;
}

const unknownToken = () => problems.unauthorized('The logger token is unknown, revoked or the logger is retired.');

export async function authenticateLogger(sequelize: Sequelize, req: Request): Promise<DeviceLogger> {
  const token = bearerToken(req);
  if (!token) throw problems.unauthorized('Send the logger token as "Authorization: Bearer hlt_…".');
  if (!LOGGER_TOKEN.test(token)) throw unknownToken();
  const digest = digestToken(token);
  const rows = await sequelize.query<DeviceLogger & { tokenDigest: string }>(
    `SELECT l.id, l.serial, l.status, l.model_id AS "modelId", l.site_id AS "siteId", l.board, l.channel, l.supply_v AS "supplyV",
            l.token_digest AS "tokenDigest", m.min_update_supply_v AS "minUpdateSupplyV", m.check_in_interval_s AS "checkInIntervalS",
            s.latitude, s.longitude, l.last_check_in_at AS "lastCheckInAt"
       FROM loggers l JOIN models m ON m.id = l.model_id LEFT JOIN sites s ON s.id = l.site_id
      WHERE l.token_digest = :digest`,
    { type: QueryTypes.SELECT, replacements: { digest } },
  );
  const row = rows[0];
  if (!row || !sameDigest(row.tokenDigest, digest) || row.status === 'retired') throw unknownToken();
  const { tokenDigest: _omit, ...logger } = row;
  return {
    ...logger,
    supplyV: logger.supplyV === null ? null : Number(logger.supplyV),
    minUpdateSupplyV: Number(logger.minUpdateSupplyV),
    checkInIntervalS: Number(logger.checkInIntervalS),
    latitude: logger.latitude === null ? null : Number(logger.latitude),
    longitude: logger.longitude === null ? null : Number(logger.longitude),
    lastCheckInAt: logger.lastCheckInAt === null ? null : new Date(logger.lastCheckInAt),
  };
}
