// The measurement-drift trip (server/rollout/drift.ts): each logger's readings summed per UTC day and
// running version, written by the check-in in its one statement, and the release's three trip points.
//
// logger_days: one row per logger, UTC day and version it ran — energy measured between check-ins (Wh),
// the clear-sky insolation of the same intervals (Wh/m²), the probe's temperature above the expected air
// temperature (sum and count of unflagged readings), and probe readings with how many were flagged.
// Keyed by version too, so a day on which a logger installed a release keeps both sides apart. Pruned
// with the check-in history (server/device-api/partitions.ts: older than the retention window).
//
// The trip points' defaults are schemas/words.ts DRIFT_TRIP_POINTS at the time of writing (a migration
// keeps its own figures).
import type { Sequelize, Transaction } from 'sequelize';

export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `CREATE TABLE logger_days (
       logger_id uuid NOT NULL REFERENCES loggers(id) ON DELETE CASCADE,
       day date NOT NULL,
       firmware text NOT NULL,
       energy_wh double precision NOT NULL DEFAULT 0,
       clear_sky_wh double precision NOT NULL DEFAULT 0,
       temp_excess_sum_c double precision NOT NULL DEFAULT 0,
       temp_readings integer NOT NULL DEFAULT 0,
       probe_readings integer NOT NULL DEFAULT 0,
       probe_flagged integer NOT NULL DEFAULT 0,
       check_ins integer NOT NULL DEFAULT 0,
       PRIMARY KEY (logger_id, day, firmware)
     );
     CREATE INDEX logger_days_day_idx ON logger_days (day);
     ALTER TABLE releases
       ADD COLUMN trip_drift_energy numeric NOT NULL DEFAULT 0.1 CONSTRAINT releases_trip_drift_energy_range CHECK (trip_drift_energy > 0 AND trip_drift_energy <= 1),
       ADD COLUMN trip_drift_temp_c numeric NOT NULL DEFAULT 3 CONSTRAINT releases_trip_drift_temp_c_range CHECK (trip_drift_temp_c > 0 AND trip_drift_temp_c <= 50),
       ADD COLUMN trip_drift_flagged numeric NOT NULL DEFAULT 0.02 CONSTRAINT releases_trip_drift_flagged_range CHECK (trip_drift_flagged > 0 AND trip_drift_flagged <= 1);`,
    { transaction },
  );
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `DROP TABLE logger_days;
     ALTER TABLE releases DROP COLUMN trip_drift_energy, DROP COLUMN trip_drift_temp_c, DROP COLUMN trip_drift_flagged;`,
    { transaction },
  );
}
