import type { Sequelize, Transaction } from 'sequelize';

// The device API: each logger's latest reported state on its row (what the fleet views read), and the
// check-in history in a table partitioned by day (DEVELOPERS.md: "partitioned by day with a
// retention window"). Daily partitions are created ahead by the partition service
// (server/device-api/partitions.ts) at boot and daily; a DEFAULT partition catches anything outside
// them (a clock far off, a maintenance run missed), so an insert never fails for want of a partition.
export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `
    ALTER TABLE loggers
      ADD COLUMN reported_board text,
      ADD COLUMN security_counter integer NOT NULL DEFAULT 0 CHECK (security_counter >= 0),
      ADD COLUMN readings jsonb,
      ADD COLUMN last_ip text,
      ADD COLUMN rssi_dbm integer,
      ADD COLUMN free_heap_b bigint,
      ADD COLUMN uptime_s bigint,
      ADD COLUMN config_version integer,
      ADD COLUMN last_reset_reason text,
      ADD COLUMN last_check_in_at timestamptz,
      ADD COLUMN check_in_count bigint NOT NULL DEFAULT 0;
    CREATE INDEX loggers_firmware_idx ON loggers (model_id, firmware);

    CREATE TABLE check_ins (
      logger_id uuid NOT NULL,
      at timestamptz NOT NULL,
      firmware text NOT NULL,
      board text NOT NULL,
      security_counter integer NOT NULL,
      supply_v numeric(6,3),
      readings jsonb,
      reset_reason text,
      resets jsonb,
      rssi_dbm integer,
      free_heap_b bigint,
      uptime_s bigint,
      config_version integer,
      ip text
    ) PARTITION BY RANGE (at);
    CREATE INDEX check_ins_logger_at_idx ON check_ins (logger_id, at);
    CREATE TABLE check_ins_default PARTITION OF check_ins DEFAULT;

    -- Each process caches the releases it offers and drops its copy when one changes
    -- (server/device-api/release-cache.ts listens on this channel; the payload is the model id,
    -- or empty for "every model").
    CREATE FUNCTION heliodor_notify_release_change() RETURNS trigger LANGUAGE plpgsql AS $fn$
    BEGIN
      IF TG_TABLE_NAME = 'releases' AND TG_OP = 'DELETE' THEN
        PERFORM pg_notify('heliodor_releases', OLD.model_id::text);
      ELSIF TG_TABLE_NAME = 'releases' THEN
        PERFORM pg_notify('heliodor_releases', NEW.model_id::text);
      ELSE
        PERFORM pg_notify('heliodor_releases', '');
      END IF;
      RETURN NULL;
    END $fn$;
    CREATE TRIGGER releases_notify AFTER INSERT OR UPDATE OR DELETE ON releases
      FOR EACH ROW EXECUTE FUNCTION heliodor_notify_release_change();
    CREATE TRIGGER release_pilot_sites_notify AFTER INSERT OR UPDATE OR DELETE ON release_pilot_sites
      FOR EACH STATEMENT EXECUTE FUNCTION heliodor_notify_release_change();
    CREATE TRIGGER signing_keys_notify AFTER UPDATE ON signing_keys
      FOR EACH STATEMENT EXECUTE FUNCTION heliodor_notify_release_change();

    DO $$
    DECLARE
      day date := (now() AT TIME ZONE 'UTC')::date;
      i integer;
    BEGIN
      FOR i IN 0..7 LOOP
        EXECUTE format(
          'CREATE TABLE IF NOT EXISTS %I PARTITION OF check_ins FOR VALUES FROM (%L) TO (%L)',
          'check_ins_p' || to_char(day + i, 'YYYYMMDD'),
          ((day + i)::text || ' 00:00:00+00'),
          ((day + i + 1)::text || ' 00:00:00+00')
        );
      END LOOP;
    END $$;
    `,
    { transaction },
  );
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `DROP TRIGGER releases_notify ON releases; DROP TRIGGER release_pilot_sites_notify ON release_pilot_sites;
     DROP TRIGGER signing_keys_notify ON signing_keys; DROP FUNCTION heliodor_notify_release_change();
     DROP TABLE check_ins;
     DROP INDEX loggers_firmware_idx;
     ALTER TABLE loggers
       DROP COLUMN reported_board, DROP COLUMN security_counter, DROP COLUMN readings, DROP COLUMN last_ip,
       DROP COLUMN rssi_dbm, DROP COLUMN free_heap_b, DROP COLUMN uptime_s, DROP COLUMN config_version,
       DROP COLUMN last_reset_reason, DROP COLUMN last_check_in_at, DROP COLUMN check_in_count;`,
    { transaction },
  );
}
