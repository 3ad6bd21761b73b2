// Check-in history partitions (migration 0004): one partition per UTC day, created a week ahead, and
// dropped once the whole day is older than the retention window (HELIODOR_CHECKIN_RETENTION_DAYS,
// default 30). Rows that fell into the DEFAULT partition (a day that had no partition yet) are moved
// into the day's partition when it is created, because PostgreSQL refuses to create a partition whose
// range the DEFAULT partition already holds rows for.
//
// Every Heliodor process runs this (HELIODOR_WORKERS, several hosts), so a run is one transaction that
// first takes a transaction-level advisory lock (PostgreSQL manual §13.3.5): a process that finds the
// lock taken skips its turn, and two processes never create or drop the same partition at once.
import type { Sequelize, Transaction } from 'sequelize';
import { QueryTypes } from 'sequelize';
import { DEFAULT_RETENTION_DAYS, retentionDays } from '../db/retention';

export { DEFAULT_RETENTION_DAYS, retentionDays };
export const DAYS_AHEAD = 7;

const DAY_MS = 86_400_000;

/** The UTC day (midnight) that holds `at`. */
export function utcDay(at: Date): Date {
  return new Date(Math.floor(at.getTime() / DAY_MS) * DAY_MS);
}

export function partitionName(day: Date): string {
  return `check_ins_p${day.toISOString().slice(0, 10).replace(/-/g, '')}`;
}

const NAME = /^check_ins_p(\d{4})(\d{2})(\d{2})$/;

/** The day a partition name stands for, or null for another table (e.g. the DEFAULT partition). */
export function dayOfPartition(name: string): Date | null {
  const m = NAME.exec(name);
  return m ? new Date(`${m[1]}-${m[2]}-${m[3]}T00:00:00Z`) : null;
}

export type PartitionReport = { created: string[]; dropped: string[]; movedFromDefault: number; skipped?: boolean };

/** The advisory lock's name; one process at a time maintains the partitions. */
export const MAINTENANCE_LOCK = 'heliodor:check-in-partitions';

/**
 * Creates the partitions from today to DAYS_AHEAD ahead and drops the ones past retention, in one
 * transaction; `skipped` when another process is doing it right now.
 */
export async function maintainCheckInPartitions(sequelize: Sequelize, now: Date, retention = retentionDays()): Promise<PartitionReport> {
  return sequelize.transaction(async (transaction) => {
    const [lock] = await sequelize.query<{ got: boolean }>('SELECT pg_try_advisory_xact_lock(hashtext(:name)) AS got', {
      type: QueryTypes.SELECT,
      transaction,
      replacements: { name: MAINTENANCE_LOCK },
    });
    if (!lock.got) return { created: [], dropped: [], movedFromDefault: 0, skipped: true };
    return maintainLocked(sequelize, transaction, now, retention);
  });
}

async function maintainLocked(sequelize: Sequelize, transaction: Transaction, now: Date, retention: number): Promise<PartitionReport> {
  const existing = new Set(
    (
      await sequelize.query<{ name: string }>(
        `SELECT c.relname AS name FROM pg_inherits i JOIN pg_class c ON c.oid = i.inhrelid JOIN pg_class p ON p.oid = i.inhparent
         WHERE p.relname = 'check_ins'`,
        { type: QueryTypes.SELECT, transaction },
      )
    ).map((r) => r.name),
  );
  const report: PartitionReport = { created: [], dropped: [], movedFromDefault: 0 };
  const today = utcDay(now);
  for (let i = 0; i <= DAYS_AHEAD; i++) {
    const day = new Date(today.getTime() + i * DAY_MS);
    const name = partitionName(day);
    if (existing.has(name)) continue;
    report.movedFromDefault += await createPartition(sequelize, transaction, day);
    report.created.push(name);
  }
  const oldestKept = new Date(today.getTime() - retention * DAY_MS);
  for (const name of existing) {
    const day = dayOfPartition(name);
    if (day && day.getTime() < oldestKept.getTime()) {
      await sequelize.query(`DROP TABLE IF EXISTS "${name}"`, { transaction });
      report.dropped.push(name);
    }
  }
  // The DEFAULT partition keeps no more than the partitions do, and neither do the loggers' daily sums
  // (logger_days, migration 0019: the measurement-drift trip's days).
  await sequelize.query('DELETE FROM check_ins_default WHERE at < :oldestKept', { transaction, replacements: { oldestKept } });
  await sequelize.query('DELETE FROM logger_days WHERE day < CAST(:oldestKept AS date)', { transaction, replacements: { oldestKept: oldestKept.toISOString().slice(0, 10) } });
  return report;
}

async function createPartition(sequelize: Sequelize, transaction: Transaction, day: Date): Promise<number> {
  const name = partitionName(day);
  const from = day.toISOString();
  const to = new Date(day.getTime() + DAY_MS).toISOString();
  // Lock the parent so no insert lands in DEFAULT for this day while its rows move.
  await sequelize.query('LOCK TABLE check_ins IN SHARE ROW EXCLUSIVE MODE', { transaction });
  await sequelize.query(`CREATE TABLE IF NOT EXISTS "${name}" (LIKE check_ins INCLUDING DEFAULTS INCLUDING CONSTRAINTS)`, { transaction });
  const [, moved] = await sequelize.query(
    `WITH moved AS (DELETE FROM check_ins_default WHERE at >= :from AND at < :to RETURNING *)
     INSERT INTO "${name}" SELECT * FROM moved`,
    { transaction, replacements: { from, to } },
  );
  await sequelize.query(`ALTER TABLE check_ins ATTACH PARTITION "${name}" FOR VALUES FROM ('${from}') TO ('${to}')`, { transaction });
  return typeof moved === 'number' ? moved : ((moved as { rowCount?: number } | undefined)?.rowCount ?? 0);
}

/**
 * Runs the maintenance now and then every six hours, in the background: errors (a database still
 * starting) are logged and retried a minute later, never fatal. The timer does not keep the process
 * alive. Returns a stop function.
 */
export function startPartitionMaintenance(
  sequelize: Sequelize,
  options: { now: () => Date; log: (err: unknown) => void; everyMs?: number },
): () => void {
  let running = false;
  let retry: NodeJS.Timeout | null = null;
  const run = async () => {
    if (running) return;
    running = true;
    try {
      // At first boot the migrations may not have created the table yet: look again shortly, quietly.
      const [[found]] = (await sequelize.query("SELECT to_regclass('check_ins') IS NOT NULL AS ready")) as [{ ready: boolean }[], unknown];
      if (!found.ready) {
        retry = setTimeout(() => void run(), 5_000);
        retry.unref?.();
        return;
      }
      await maintainCheckInPartitions(sequelize, options.now());
    } catch (err) {
      // At boot the database may still be starting or migrating: try again in a minute.
      options.log(err);
      retry = setTimeout(() => void run(), 60_000);
      retry.unref?.();
    } finally {
      running = false;
    }
  };
  const first = setTimeout(() => void run(), 0);
  first.unref?.();
  const timer = setInterval(() => void run(), options.everyMs ?? 6 * 3_600_000);
  timer.unref?.();
  return () => {
    clearTimeout(first);
    if (retry) clearTimeout(retry);
    clearInterval(timer);
  };
}
