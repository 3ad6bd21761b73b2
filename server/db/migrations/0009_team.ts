// Team and accounts: people can be invited (no password until they join), sign-in sessions live on the
// server so they can end, one-time links (invitations, password resets) and recovery codes are kept as
// SHA-256 digests, second-factor secrets are kept sealed (AES-256-GCM), and attempt counters for sign-in,
// reset and second-factor attempts are shared by every process through this database.
import type { Sequelize, Transaction } from 'sequelize';

export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `
    ALTER TABLE users ALTER COLUMN password_hash DROP NOT NULL;
    ALTER TABLE users ADD COLUMN joined_at timestamptz;
    UPDATE users SET joined_at = created_at;
    ALTER TABLE users ALTER COLUMN joined_at SET DEFAULT now();
    ALTER TABLE users ADD COLUMN invited_by uuid REFERENCES users(id);
    ALTER TABLE users ADD COLUMN last_sign_in_at timestamptz;
    ALTER TABLE users ADD COLUMN totp_secret text;
    ALTER TABLE users ADD COLUMN totp_pending_secret text;
    ALTER TABLE users ADD COLUMN totp_enabled_at timestamptz;
    ALTER TABLE users ADD COLUMN totp_last_step bigint;
    -- An invited person has no password yet; a person who joined always has one.
    ALTER TABLE users ADD CONSTRAINT users_joined_password CHECK (joined_at IS NULL OR password_hash IS NOT NULL);

    CREATE TABLE sessions (
      id uuid PRIMARY KEY DEFAULT gen_random_uuid(),
      user_id uuid NOT NULL REFERENCES users(id) ON DELETE CASCADE,
      -- full: signed in; second_factor: the password was right, the code is still to come
      stage text NOT NULL CHECK (stage IN ('full', 'second_factor')),
      created_at timestamptz NOT NULL DEFAULT now(),
      expires_at timestamptz NOT NULL,
      revoked_at timestamptz
    );
    CREATE INDEX sessions_user_idx ON sessions (user_id) WHERE revoked_at IS NULL;

    CREATE TABLE one_time_links (
      id uuid PRIMARY KEY DEFAULT gen_random_uuid(),
      user_id uuid NOT NULL REFERENCES users(id) ON DELETE CASCADE,
      purpose text NOT NULL CHECK (purpose IN ('invitation', 'password_reset')),
      token_digest text NOT NULL UNIQUE,
      created_by uuid REFERENCES users(id),
      created_at timestamptz NOT NULL DEFAULT now(),
      expires_at timestamptz NOT NULL,
      used_at timestamptz,
      revoked_at timestamptz
    );
    CREATE INDEX one_time_links_user_idx ON one_time_links (user_id, purpose);

    CREATE TABLE recovery_codes (
      id bigserial PRIMARY KEY,
      user_id uuid NOT NULL REFERENCES users(id) ON DELETE CASCADE,
      code_digest text NOT NULL,
      created_at timestamptz NOT NULL DEFAULT now(),
      used_at timestamptz
    );
    CREATE INDEX recovery_codes_user_idx ON recovery_codes (user_id);

    CREATE TABLE attempt_counters (
      key text PRIMARY KEY,
      count integer NOT NULL,
      window_ends timestamptz NOT NULL
    );
    `,
    { transaction },
  );
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `
    DROP TABLE attempt_counters;
    DROP TABLE recovery_codes;
    DROP TABLE one_time_links;
    DROP TABLE sessions;
    DELETE FROM users WHERE joined_at IS NULL;
    ALTER TABLE users DROP CONSTRAINT users_joined_password;
    ALTER TABLE users DROP COLUMN totp_last_step;
    ALTER TABLE users DROP COLUMN totp_enabled_at;
    ALTER TABLE users DROP COLUMN totp_pending_secret;
    ALTER TABLE users DROP COLUMN totp_secret;
    ALTER TABLE users DROP COLUMN last_sign_in_at;
    ALTER TABLE users DROP COLUMN invited_by;
    ALTER TABLE users DROP COLUMN joined_at;
    ALTER TABLE users ALTER COLUMN password_hash SET NOT NULL;
    `,
    { transaction },
  );
}
