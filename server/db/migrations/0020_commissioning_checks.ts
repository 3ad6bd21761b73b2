// The first-readings check, kept with the logger (lib/commissioning.ts): the first readings a newly enrolled
// logger sends under its measurement profile, and — once the check has its verdict — the verdict and the
// figures it used. A check-in appends at most FIRST_READINGS_COUNTED readings; the row is written once
// judged (judged_at) and stays as the logger's record even after the check-in history is dropped (30 days).
// Starting the check again deletes the row; the activity log keeps the earlier verdict's summary.
import type { Sequelize, Transaction } from 'sequelize';

export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `CREATE TABLE commissioning_checks (
       logger_id uuid PRIMARY KEY REFERENCES loggers(id) ON DELETE CASCADE,
       profile_version integer NOT NULL CHECK (profile_version >= 1),
       readings jsonb NOT NULL DEFAULT '[]'::jsonb CHECK (jsonb_typeof(readings) = 'array'),
       figures jsonb,
       verdict jsonb,
       passed boolean,
       started_at timestamptz NOT NULL,
       updated_at timestamptz NOT NULL,
       judged_at timestamptz,
       CONSTRAINT commissioning_checks_judged CHECK (
         (judged_at IS NULL AND passed IS NULL AND verdict IS NULL AND figures IS NULL)
         OR (judged_at IS NOT NULL AND passed IS NOT NULL AND verdict IS NOT NULL AND figures IS NOT NULL)
       )
     );`,
    { transaction },
  );
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query('DROP TABLE commissioning_checks;', { transaction });
}
