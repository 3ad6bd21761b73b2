// The per-logger check-in rate limit (DEVICE_API.md "Load manners") is counted in PostgreSQL, so every
// Heliodor process (HELIODOR_WORKERS, or several hosts) shares one count per logger: one row per logger
// with the current minute's window and the check-ins counted in it, written by the check-in's own
// statement (server/device-api/checkin-store.ts recordVisit). A retired or removed logger's row goes
// with it.
import type { Sequelize, Transaction } from 'sequelize';

export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `CREATE TABLE device_check_in_windows (
       logger_id uuid PRIMARY KEY REFERENCES loggers(id) ON DELETE CASCADE,
       window_ends timestamptz NOT NULL,
       count integer NOT NULL CHECK (count >= 0)
     ) WITH (fillfactor = 80)`,
    { transaction },
  );
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query('DROP TABLE device_check_in_windows', { transaction });
}
