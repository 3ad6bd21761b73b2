// The fleet summaries' upkeep stays proportional to what changed, not to the fleet.
//
// - A count that falls to zero is deleted after each fold (server/fleet/summaries.ts foldCounts). Without
//   an index that was a sequential scan of every per-site count at every fold: about 50 ms at a million
//   loggers (250 000 sites). A partial index holds only the rows at zero, so the delete reads those.
// - The queues (summary_dirty_loggers and the count changes) are emptied as fast as they fill. Autovacuum
//   starts at 50 dead rows plus 20 % of the table's estimated rows (PostgreSQL documentation, "The
//   Autovacuum Daemon"), and a queue that once held a million rows keeps that estimate, so its dead rows
//   piled up and every count of the queue read them all (35 ms). With no share of the estimate, a queue is
//   vacuumed once 1 000 rows are dead.
import type { Sequelize, Transaction } from 'sequelize';

const COUNTS = ['site_logger_counts', 'fleet_logger_counts', 'site_report_counts', 'release_report_counts'];
const QUEUES = ['summary_dirty_loggers', 'logger_count_changes', 'report_count_changes'];

export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    [
      ...COUNTS.map((table) => `CREATE INDEX ${table}_zero_idx ON ${table} (n) WHERE n = 0;`),
      ...QUEUES.map((table) => `ALTER TABLE ${table} SET (autovacuum_vacuum_scale_factor = 0, autovacuum_vacuum_threshold = 1000);`),
    ].join('\n'),
    { transaction },
  );
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    [
      ...COUNTS.map((table) => `DROP INDEX ${table}_zero_idx;`),
      ...QUEUES.map((table) => `ALTER TABLE ${table} RESET (autovacuum_vacuum_scale_factor, autovacuum_vacuum_threshold);`),
    ].join('\n'),
    { transaction },
  );
}
