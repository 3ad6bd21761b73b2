// A CSV batch of loggers is remembered as a batch, so its labels can be issued again as one (every
// logger of the batch still waiting for enrollment gets a new token, and the old labels stop working).
// Batches registered before this migration have no record; their loggers keep batch_id null.
import type { Sequelize, Transaction } from 'sequelize';

export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `CREATE TABLE logger_batches (
       id uuid PRIMARY KEY DEFAULT gen_random_uuid(),
       file_name text NOT NULL,
       count integer NOT NULL CHECK (count > 0),
       registered_by uuid REFERENCES users(id),
       created_at timestamptz NOT NULL DEFAULT now()
     );
     ALTER TABLE loggers ADD COLUMN batch_id uuid REFERENCES logger_batches(id);
     CREATE INDEX loggers_batch_idx ON loggers (batch_id, serial) WHERE batch_id IS NOT NULL;`,
    { transaction },
  );
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query('ALTER TABLE loggers DROP COLUMN batch_id; DROP TABLE logger_batches;', { transaction });
}
