import type { Sequelize, Transaction } from 'sequelize';

// Registry additions:
// - serials are unique without regard to case ("fl2-0001" and "FL2-0001" read as the same logger on a label);
// - install photos live in the database beside their logger, so a photo and its metadata in loggers.install
//   are written in one transaction (nothing half-written) and go with every database backup. At ≤ 10 MB
//   each and one per logger, a few hundred loggers stay well within what PostgreSQL bytea handles.
export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `
    CREATE UNIQUE INDEX loggers_serial_lower_key ON loggers (lower(serial));

    CREATE TABLE logger_photos (
      logger_id uuid PRIMARY KEY REFERENCES loggers(id) ON DELETE CASCADE,
      content_type text NOT NULL CHECK (content_type IN ('image/jpeg', 'image/png')),
      bytes bytea NOT NULL,
      size integer NOT NULL CHECK (size BETWEEN 1 AND 10485760),
      sha256 char(64) NOT NULL,
      uploaded_by uuid REFERENCES users(id),
      uploaded_at timestamptz NOT NULL DEFAULT now()
    );
    `,
    { transaction },
  );
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query('DROP TABLE logger_photos; DROP INDEX loggers_serial_lower_key;', { transaction });
}
