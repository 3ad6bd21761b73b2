import type { Sequelize, Transaction } from 'sequelize';

export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `
    CREATE TABLE users (
      id uuid PRIMARY KEY DEFAULT gen_random_uuid(),
      email text NOT NULL,
      name text NOT NULL,
      role text NOT NULL CHECK (role IN ('admin', 'release_engineer', 'integrator', 'support')),
      password_hash text NOT NULL,
      disabled_at timestamptz,
      created_at timestamptz NOT NULL DEFAULT now(),
      updated_at timestamptz NOT NULL DEFAULT now()
    );
    CREATE UNIQUE INDEX users_email_key ON users (lower(email));

    CREATE TABLE activity (
      id bigserial PRIMARY KEY,
      at timestamptz NOT NULL DEFAULT now(),
      actor_type text NOT NULL CHECK (actor_type IN ('person', 'token', 'logger', 'system')),
      actor_id uuid,
      actor_name text NOT NULL,
      action text NOT NULL,
      target_type text NOT NULL,
      target_id text,
      summary text NOT NULL,
      request_id text,
      details jsonb
    );
    CREATE INDEX activity_at_idx ON activity (at DESC);
    CREATE INDEX activity_target_idx ON activity (target_type, target_id, at DESC);
    `,
    { transaction },
  );
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query('DROP TABLE activity; DROP TABLE users;', { transaction });
}
