// The overview's silent and low-supply counts read only their flag's index entries.
//
// The overview counts each flag model by model (server/fleet/table.ts flagCases and countFlag):
// `status = enrolled AND model_id = … AND COALESCE(last seen, -infinity) < …` for silent, and `status <>
// retired AND supply IS NOT NULL AND model_id = … AND COALESCE(supply, -1) < …` for low supply. The
// indexes of migration 0014 held the bare columns, so the comparison was a filter applied to every row of
// the model, or the count fetched each row to check its status. An index on the same expressions, with the
// flag's other conditions as its predicate, answers each model's count from its own range without the
// rows (PostgreSQL documentation, "Indexes on Expressions", "Partial Indexes"). Each index also carries
// the bare column (INCLUDE): the planner allows an index-only scan of an expression index only when the
// columns the expression reads are in the index too ("Index-Only Scans and Covering Indexes").
// The per-site index on site_id alone goes too: (site_id, id) of migration 0006 serves every lookup it
// did, and each index is one more entry for every check-in's update of the logger row.
import type { Sequelize, Transaction } from 'sequelize';

export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `DROP INDEX loggers_silence_idx;
     DROP INDEX loggers_supply_idx;
     DROP INDEX loggers_site_idx;
     CREATE INDEX loggers_silence_idx ON loggers (model_id, (COALESCE(last_seen_at, '-infinity'::timestamptz))) INCLUDE (last_seen_at) WHERE status = 'enrolled';
     CREATE INDEX loggers_supply_idx ON loggers (model_id, (COALESCE(supply_v, -1))) INCLUDE (supply_v) WHERE supply_v IS NOT NULL AND status <> 'retired';`,
    { transaction },
  );
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `DROP INDEX loggers_silence_idx;
     DROP INDEX loggers_supply_idx;
     CREATE INDEX loggers_site_idx ON loggers (site_id);
     CREATE INDEX loggers_silence_idx ON loggers (model_id, last_seen_at) WHERE status = 'enrolled';
     CREATE INDEX loggers_supply_idx ON loggers (model_id, supply_v) WHERE supply_v IS NOT NULL;`,
    { transaction },
  );
}
