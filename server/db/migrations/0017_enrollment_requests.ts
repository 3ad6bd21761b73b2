// An enrollment sent again (a phone that lost its signal cannot tell whether its first try arrived)
// gets the first answer instead of a second enrollment: each enrollment carries an id the phone made,
// remembered per person with a digest of what was asked and the answer given. The row is written in
// the enrollment's own transaction, so a refused enrollment leaves none and may be sent again.
import type { Sequelize, Transaction } from 'sequelize';

export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `CREATE TABLE enrollment_requests (
       person_id uuid NOT NULL REFERENCES users(id) ON DELETE CASCADE,
       enrollment_id uuid NOT NULL,
       request_digest text NOT NULL CHECK (request_digest ~ '^[0-9a-f]{64}$'),
       logger_id uuid REFERENCES loggers(id) ON DELETE CASCADE,
       status integer,
       answer jsonb,
       created_at timestamptz NOT NULL DEFAULT now(),
       PRIMARY KEY (person_id, enrollment_id)
     );
     CREATE INDEX enrollment_requests_logger_idx ON enrollment_requests (logger_id);`,
    { transaction },
  );
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query('DROP TABLE enrollment_requests;', { transaction });
}
