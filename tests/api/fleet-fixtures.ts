// Fixtures for the fleet view tests: a logger's latest reported state and its check-in history written
// straight into the database (as the check-in service leaves them), so a hand-built fleet has exactly
// the values each test names.
import type { TestApp } from '../helpers/app';

export type ReportedState = {
  firmware?: string | null;
  /** Seconds before `now` of the last check-in; null: never seen. */
  lastSeenAgoS?: number | null;
  supplyV?: number | null;
  tempC?: number | null;
  board?: string;
  channel?: 'stable' | 'early';
};

export async function setReported(t: TestApp, loggerId: string, now: Date, s: ReportedState) {
  const lastSeen = s.lastSeenAgoS === null || s.lastSeenAgoS === undefined ? null : new Date(now.getTime() - s.lastSeenAgoS * 1000);
  await t.sequelize.query(
    `UPDATE loggers SET firmware = :firmware, last_seen_at = :lastSeen, last_check_in_at = :lastSeen, supply_v = :supplyV,
            readings = CAST(:readings AS jsonb), board = COALESCE(:board, board), reported_board = COALESCE(:board, board),
            channel = COALESCE(:channel, channel)
      WHERE id = :id`,
    {
      replacements: {
        id: loggerId,
        firmware: s.firmware ?? null,
        lastSeen,
        supplyV: s.supplyV ?? null,
        readings: s.tempC === undefined || s.tempC === null ? null : JSON.stringify({ temp_c: s.tempC }),
        board: s.board ?? null,
        channel: s.channel ?? null,
      },
    },
  );
}

/** One history row, as a check-in writes it; resets by reason (DEVICE_API.md reset_counts). */
export async function addCheckIn(t: TestApp, loggerId: string, at: Date, o: { firmware?: string; supplyV?: number; tempC?: number; resets?: Record<string, number>; resetReason?: string } = {}) {
  await t.sequelize.query(
    `INSERT INTO check_ins (logger_id, at, firmware, board, security_counter, supply_v, readings, reset_reason, resets)
     VALUES (:id, :at, :firmware, 'B', 1, :supplyV, CAST(:readings AS jsonb), :resetReason, CAST(:resets AS jsonb))`,
    {
      replacements: {
        id: loggerId,
        at,
        firmware: o.firmware ?? '2.3.0',
        supplyV: o.supplyV ?? null,
        readings: o.tempC === undefined ? null : JSON.stringify({ temp_c: o.tempC }),
        resetReason: o.resetReason ?? null,
        resets: o.resets ? JSON.stringify(o.resets) : null,
      },
    },
  );
}

/** Marks a release as having reached widening (or complete) at a time, as the lifecycle would. */
export async function reached(t: TestApp, releaseId: string, state: 'widening' | 'complete' | 'stopped' | 'paused', at: Date, extra: { channel?: 'stable' | 'early'; share?: number; daylightWindow?: boolean } = {}) {
  await t.sequelize.query(
    `UPDATE releases SET state = :state, widened_at = :at, completed_at = CASE WHEN :state = 'complete' THEN CAST(:at AS timestamptz) END,
            channel = COALESCE(:channel, channel), share = COALESCE(:share, share), daylight_window = COALESCE(:daylight, daylight_window)
      WHERE id = :id`,
    { replacements: { id: releaseId, state, at, channel: extra.channel ?? null, share: extra.share ?? null, daylight: extra.daylightWindow ?? null } },
  );
}

export const hoursBefore = (now: Date, h: number) => new Date(now.getTime() - h * 3_600_000);
