import type { Sequelize, Transaction } from 'sequelize';

// Models, sites and loggers: the registry. Device-reported state lives on the logger row
// (latest values only); history tables come with the device API.
export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `
    CREATE TABLE models (
      id uuid PRIMARY KEY DEFAULT gen_random_uuid(),
      name text NOT NULL,
      boards jsonb NOT NULL DEFAULT '[]',
      min_update_supply_v numeric(6,3) NOT NULL,
      check_in_interval_s integer NOT NULL CHECK (check_in_interval_s BETWEEN 60 AND 86400),
      bus_v_max numeric(6,3) NOT NULL,
      shunt_full_scale_v numeric(8,6) NOT NULL,
      temp_resolutions integer[] NOT NULL DEFAULT '{9,10,11,12}',
      created_at timestamptz NOT NULL DEFAULT now(),
      updated_at timestamptz NOT NULL DEFAULT now()
    );
    CREATE UNIQUE INDEX models_name_key ON models (lower(name));

    CREATE TABLE sites (
      id uuid PRIMARY KEY DEFAULT gen_random_uuid(),
      name text NOT NULL,
      customer text NOT NULL DEFAULT '',
      address text NOT NULL DEFAULT '',
      latitude numeric(9,6) CHECK (latitude BETWEEN -90 AND 90),
      longitude numeric(9,6) CHECK (longitude BETWEEN -180 AND 180),
      time_zone text NOT NULL DEFAULT 'UTC',
      notes text NOT NULL DEFAULT '',
      created_by uuid REFERENCES users(id),
      created_at timestamptz NOT NULL DEFAULT now(),
      updated_at timestamptz NOT NULL DEFAULT now()
    );
    CREATE INDEX sites_name_idx ON sites (lower(name));
    CREATE INDEX sites_customer_idx ON sites (lower(customer));

    CREATE TABLE site_integrators (
      site_id uuid NOT NULL REFERENCES sites(id) ON DELETE CASCADE,
      user_id uuid NOT NULL REFERENCES users(id) ON DELETE CASCADE,
      PRIMARY KEY (site_id, user_id)
    );
    CREATE INDEX site_integrators_user_idx ON site_integrators (user_id);

    CREATE TABLE loggers (
      id uuid PRIMARY KEY DEFAULT gen_random_uuid(),
      serial text NOT NULL,
      model_id uuid NOT NULL REFERENCES models(id),
      board text NOT NULL,
      track text NOT NULL DEFAULT 'stable' CHECK (track IN ('stable', 'early')),
      status text NOT NULL DEFAULT 'registered' CHECK (status IN ('registered', 'enrolled', 'retired')),
      token_digest char(64),
      token_issued_at timestamptz,
      site_id uuid REFERENCES sites(id),
      enrolled_at timestamptz,
      enrolled_by uuid REFERENCES users(id),
      install jsonb,
      registered_by uuid REFERENCES users(id),
      retired_at timestamptz,
      firmware text,
      supply_v numeric(6,3),
      last_seen_at timestamptz,
      created_at timestamptz NOT NULL DEFAULT now(),
      updated_at timestamptz NOT NULL DEFAULT now()
    );
    CREATE UNIQUE INDEX loggers_serial_key ON loggers (serial);
    CREATE UNIQUE INDEX loggers_token_digest_key ON loggers (token_digest) WHERE token_digest IS NOT NULL;
    CREATE INDEX loggers_site_idx ON loggers (site_id);
    CREATE INDEX loggers_model_idx ON loggers (model_id, board);
    CREATE INDEX loggers_status_idx ON loggers (status);

    CREATE TABLE measurement_profiles (
      id uuid PRIMARY KEY DEFAULT gen_random_uuid(),
      logger_id uuid NOT NULL REFERENCES loggers(id) ON DELETE CASCADE,
      version integer NOT NULL CHECK (version >= 1),
      panel_wp numeric(8,2),
      panel_voc_v numeric(6,2),
      shunt_ohm double precision NOT NULL,
      max_current_a double precision NOT NULL,
      current_lsb_a double precision NOT NULL,
      calibration integer NOT NULL CHECK (calibration BETWEEN 1 AND 32767),
      power_lsb_w double precision NOT NULL,
      bus_v_max numeric(6,3) NOT NULL,
      temp_resolution_bits integer NOT NULL CHECK (temp_resolution_bits BETWEEN 9 AND 12),
      sample_interval_s integer NOT NULL,
      created_by uuid REFERENCES users(id),
      created_at timestamptz NOT NULL DEFAULT now(),
      UNIQUE (logger_id, version)
    );
    `,
    { transaction },
  );
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    'DROP TABLE measurement_profiles; DROP TABLE loggers; DROP TABLE site_integrators; DROP TABLE sites; DROP TABLE models;',
    { transaction },
  );
}
