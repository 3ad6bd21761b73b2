import type { Sequelize, Transaction } from 'sequelize';

// Signing keys, automation tokens, the firmware images, releases with their targeting and history,
// and the install reports loggers send (filled by the device API; read here for counts).
export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `
    CREATE TABLE signing_keys (
      id uuid PRIMARY KEY DEFAULT gen_random_uuid(),
      name text NOT NULL,
      key_id char(16) NOT NULL UNIQUE CHECK (key_id ~ '^[0-9a-f]{16}$'),
      algorithm text NOT NULL CHECK (algorithm IN ('ed25519', 'ecdsa-p256-sha256')),
      public_key_pem text NOT NULL,
      state text NOT NULL DEFAULT 'active' CHECK (state IN ('active', 'retired', 'revoked')),
      created_by uuid REFERENCES users(id),
      created_at timestamptz NOT NULL DEFAULT now(),
      retired_at timestamptz,
      revoked_at timestamptz
    );

    CREATE TABLE api_tokens (
      id uuid PRIMARY KEY DEFAULT gen_random_uuid(),
      name text NOT NULL,
      token_digest char(64) NOT NULL UNIQUE,
      scopes text[] NOT NULL CHECK (scopes <@ ARRAY['images:write', 'releases:write', 'fleet:read']::text[] AND cardinality(scopes) > 0),
      expires_at timestamptz NOT NULL,
      last_used_at timestamptz,
      created_by uuid REFERENCES users(id),
      created_at timestamptz NOT NULL DEFAULT now(),
      revoked_at timestamptz
    );

    CREATE TABLE images (
      sha256 char(64) PRIMARY KEY CHECK (sha256 ~ '^[0-9a-f]{64}$'),
      size bigint NOT NULL CHECK (size > 0),
      created_at timestamptz NOT NULL DEFAULT now()
    );

    CREATE TABLE releases (
      id uuid PRIMARY KEY DEFAULT gen_random_uuid(),
      model_id uuid NOT NULL REFERENCES models(id),
      version text NOT NULL,
      track text NOT NULL CHECK (track IN ('stable', 'early')),
      state text NOT NULL DEFAULT 'draft'
        CHECK (state IN ('draft', 'pilot', 'expanding', 'complete', 'paused', 'halted', 'withdrawn')),
      share numeric(5,2) NOT NULL DEFAULT 0 CHECK (share BETWEEN 0 AND 100),
      resume_state text CHECK (resume_state IN ('pilot', 'expanding', 'complete', 'paused')),
      boards text[] NOT NULL,
      manifest_boards text[] NOT NULL,
      upgrade_from text,
      daylight_window boolean NOT NULL DEFAULT false,
      halt_failure_ratio numeric NOT NULL DEFAULT 0.05 CHECK (halt_failure_ratio BETWEEN 0 AND 1),
      halt_min_reports integer NOT NULL DEFAULT 20 CHECK (halt_min_reports >= 1),
      halt_reset_factor numeric NOT NULL DEFAULT 2 CHECK (halt_reset_factor >= 1),
      security_counter integer NOT NULL CHECK (security_counter >= 0),
      image_sha256 char(64) NOT NULL REFERENCES images(sha256),
      manifest bytea NOT NULL,
      signature bytea NOT NULL,
      signing_key_id uuid NOT NULL REFERENCES signing_keys(id),
      notes text NOT NULL DEFAULT '',
      created_by uuid REFERENCES users(id),
      created_at timestamptz NOT NULL DEFAULT now(),
      updated_at timestamptz NOT NULL DEFAULT now(),
      piloted_at timestamptz,
      expanded_at timestamptz,
      completed_at timestamptz,
      halted_at timestamptz,
      UNIQUE (model_id, version)
    );
    CREATE INDEX releases_state_idx ON releases (model_id, state);
    CREATE INDEX releases_image_idx ON releases (image_sha256);
    CREATE INDEX releases_key_idx ON releases (signing_key_id);

    CREATE TABLE release_pilot_sites (
      release_id uuid NOT NULL REFERENCES releases(id) ON DELETE CASCADE,
      site_id uuid NOT NULL REFERENCES sites(id),
      PRIMARY KEY (release_id, site_id)
    );
    CREATE INDEX release_pilot_sites_site_idx ON release_pilot_sites (site_id);

    CREATE TABLE release_transitions (
      id bigserial PRIMARY KEY,
      release_id uuid NOT NULL REFERENCES releases(id) ON DELETE CASCADE,
      at timestamptz NOT NULL DEFAULT now(),
      action text NOT NULL,
      from_state text,
      to_state text NOT NULL,
      share numeric(5,2) NOT NULL,
      reason text,
      actor_type text NOT NULL CHECK (actor_type IN ('person', 'token', 'logger', 'system')),
      actor_name text NOT NULL
    );
    CREATE INDEX release_transitions_release_idx ON release_transitions (release_id, id);

    CREATE TABLE install_reports (
      logger_id uuid NOT NULL REFERENCES loggers(id),
      release_id uuid NOT NULL REFERENCES releases(id) ON DELETE CASCADE,
      state text NOT NULL CHECK (state IN ('offered', 'downloading', 'downloaded', 'installing', 'installed', 'failed')),
      reason text,
      detail text,
      offered_at timestamptz NOT NULL,
      updated_at timestamptz NOT NULL,
      finished_at timestamptz,
      confirmed_at timestamptz,
      retried_at timestamptz,
      PRIMARY KEY (logger_id, release_id)
    );
    CREATE INDEX install_reports_release_state_idx ON install_reports (release_id, state);
    `,
    { transaction },
  );
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `DROP TABLE install_reports; DROP TABLE release_transitions; DROP TABLE release_pilot_sites; DROP TABLE releases;
     DROP TABLE images; DROP TABLE api_tokens; DROP TABLE signing_keys;`,
    { transaction },
  );
}
