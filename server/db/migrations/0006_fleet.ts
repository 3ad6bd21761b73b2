import type { Sequelize, Transaction } from 'sequelize';

// Fleet views: what the fleet table, the lagging sites and the timeline need to stay fast
// at 100 000 loggers.
// - firmware_key: the running version's semantic-version precedence (semver.org §11) as a text array
//   compared byte by byte (COLLATE "C"), kept by PostgreSQL itself as a generated column, so the
//   firmware sort and "behind the current release" are plain indexed comparisons in SQL.
//   Numbers are written as '0' + their length (4 digits) + the digits, so they compare numerically
//   and below alphanumeric identifiers ('1' + the text); a release ends in '1' and a pre-release in
//   '0' + its identifiers, so 2.4.0-rc.1 < 2.4.0, and a longer pre-release list wins a tie
//   (array comparison). Text that is not a semantic version gets the empty array (lowest).
// - recent_resets: times of watchdog and brown-out resets in the last 24 h (at most 32), kept by a
//   trigger on check-in history rows that carry such resets (rare), so the unstable flag and the
//   "resets in 24 h" column read one small array per logger instead of a day of history.
// - notes: short notes by support, release engineers and admins on a logger or a site.
// - indexes for every sort key of the fleet table that lives on the logger row.
export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `
    CREATE FUNCTION heliodor_semver_number(n text) RETURNS text LANGUAGE sql IMMUTABLE PARALLEL SAFE
      AS $fn$ SELECT '0' || lpad(length(n)::text, 4, '0') || n $fn$;

    CREATE FUNCTION heliodor_semver_key(v text) RETURNS text[] LANGUAGE plpgsql IMMUTABLE PARALLEL SAFE AS $fn$
    DECLARE
      m text[];
      key text[];
      id text;
    BEGIN
      IF v IS NULL THEN RETURN '{}'; END IF;
      m := regexp_match(v, '^(0|[1-9][0-9]*)\\.(0|[1-9][0-9]*)\\.(0|[1-9][0-9]*)(?:-([0-9A-Za-z-]+(?:\\.[0-9A-Za-z-]+)*))?(?:\\+[0-9A-Za-z-]+(?:\\.[0-9A-Za-z-]+)*)?$');
      IF m IS NULL THEN RETURN '{}'; END IF;
      key := ARRAY[heliodor_semver_number(m[1]), heliodor_semver_number(m[2]), heliodor_semver_number(m[3])];
      IF m[4] IS NULL THEN
        RETURN key || '1'::text;
      END IF;
      key := key || '0'::text;
      FOREACH id IN ARRAY string_to_array(m[4], '.') LOOP
        IF id ~ '^[0-9]+$' THEN
          key := key || heliodor_semver_number(id);
        ELSE
          key := key || ('1' || id);
        END IF;
      END LOOP;
      RETURN key;
    END $fn$;

    CREATE FUNCTION heliodor_resets_since(resets timestamptz[], since timestamptz) RETURNS integer LANGUAGE sql IMMUTABLE PARALLEL SAFE
      AS $fn$ SELECT count(*)::int FROM unnest(resets) AS r(at) WHERE r.at > since $fn$;

    ALTER TABLE loggers
      ADD COLUMN firmware_key text[] COLLATE "C" GENERATED ALWAYS AS (heliodor_semver_key(firmware)) STORED,
      ADD COLUMN recent_resets timestamptz[] NOT NULL DEFAULT '{}';

    CREATE FUNCTION heliodor_track_resets() RETURNS trigger LANGUAGE plpgsql AS $fn$
    DECLARE
      n integer := COALESCE((NEW.resets->>'watchdog')::int, 0) + COALESCE((NEW.resets->>'brownout')::int, 0);
    BEGIN
      IF n > 0 THEN
        UPDATE loggers SET recent_resets = (
          SELECT COALESCE(array_agg(k.at ORDER BY k.at), '{}')
            FROM (SELECT r.at FROM unnest(recent_resets || array_fill(NEW.at, ARRAY[LEAST(n, 32)])) AS r(at)
                   WHERE r.at > NEW.at - interval '24 hours' ORDER BY r.at DESC LIMIT 32) k
        ) WHERE id = NEW.logger_id;
      END IF;
      RETURN NULL;
    END $fn$;
    CREATE TRIGGER check_ins_track_resets AFTER INSERT ON check_ins
      FOR EACH ROW WHEN (NEW.resets ? 'watchdog' OR NEW.resets ? 'brownout') EXECUTE FUNCTION heliodor_track_resets();

    CREATE TABLE notes (
      id uuid PRIMARY KEY DEFAULT gen_random_uuid(),
      target_type text NOT NULL CHECK (target_type IN ('logger', 'site')),
      target_id uuid NOT NULL,
      text text NOT NULL CHECK (char_length(text) BETWEEN 1 AND 1000),
      author_id uuid REFERENCES users(id),
      author_name text NOT NULL,
      created_at timestamptz NOT NULL DEFAULT now()
    );
    CREATE INDEX notes_target_idx ON notes (target_type, target_id, created_at DESC, id DESC);

    CREATE INDEX loggers_sort_serial_idx ON loggers (lower(serial), id);
    CREATE INDEX loggers_sort_board_idx ON loggers (board, id);
    CREATE INDEX loggers_sort_track_idx ON loggers (track, id);
    CREATE INDEX loggers_sort_firmware_idx ON loggers (firmware_key, id);
    CREATE INDEX loggers_sort_last_seen_idx ON loggers ((COALESCE(last_seen_at, '-infinity'::timestamptz)), id);
    CREATE INDEX loggers_sort_supply_idx ON loggers ((COALESCE(supply_v, -1)), id);
    CREATE INDEX loggers_site_sort_idx ON loggers (site_id, id);
    CREATE INDEX sites_sort_name_idx ON sites (lower(name), id);
    CREATE INDEX sites_sort_customer_idx ON sites (lower(customer), id);
    CREATE INDEX install_reports_retry_idx ON install_reports (release_id, logger_id) WHERE state = 'failed';
    `,
    { transaction },
  );
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `DROP INDEX install_reports_retry_idx; DROP INDEX sites_sort_customer_idx; DROP INDEX sites_sort_name_idx;
     DROP INDEX loggers_site_sort_idx; DROP INDEX loggers_sort_supply_idx; DROP INDEX loggers_sort_last_seen_idx;
     DROP INDEX loggers_sort_firmware_idx; DROP INDEX loggers_sort_track_idx; DROP INDEX loggers_sort_board_idx;
     DROP INDEX loggers_sort_serial_idx;
     DROP TABLE notes;
     DROP TRIGGER check_ins_track_resets ON check_ins; DROP FUNCTION heliodor_track_resets();
     ALTER TABLE loggers DROP COLUMN recent_resets, DROP COLUMN firmware_key;
     DROP FUNCTION heliodor_resets_since(timestamptz[], timestamptz); DROP FUNCTION heliodor_semver_key(text);
     DROP FUNCTION heliodor_semver_number(text);`,
    { transaction },
  );
}
