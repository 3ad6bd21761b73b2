import type { Sequelize, Transaction } from 'sequelize';

// Fleet summaries: what the overview, the version matrix, the lagging sites and the release dashboard
// read instead of scanning every logger (server/fleet/summaries.ts keeps them and reads them).
//
// - Logger counts by site, registrar, model, channel, board, status and running version. Every write to
//   loggers appends its change (−1 for the old row, +1 for the new, only when one of those columns
//   changed) to logger_count_changes in the writer's own transaction, by statement triggers with
//   transition tables, so nothing is ever locked by a count. The summary worker folds the changes into
//   site_logger_counts (per site and registrar: an integrator's answer sums only their sites and their
//   registrations) and fleet_logger_counts (the whole fleet); a reader adds the changes not yet folded,
//   so a count is exact at the reader's snapshot whether or not the worker has run.
// - Install report counts by release, site, registrar, board, channel, logger status and report state,
//   kept the same way (report_count_changes; a logger's move changes its reports' group too), for the
//   release dashboard's per-board and per-site tallies and the overview's live releases.
// - Lagging loggers: each enrolled logger behind the current release of its channel with the reason the
//   offer decision gives (a decision runs in JavaScript, so no trigger can keep it). Triggers queue the
//   loggers whose facts changed (summary_dirty_loggers) and the models whose releases, pilot sites or
//   guards changed (summary_dirty_models); the worker recomputes those, and the loggers whose reason can
//   change with time alone at recheck_at (the silence threshold, the daylight window's edges). lagging_sites
//   is the per-site roll-up the list pages through. summary_state.as_of says when the queue last ran dry.
// - Indexes for the flag counts read at request time (silent, unstable, low supply, probe fault): each
//   matches a few per cent of the fleet, so an index range is cheap and always exact.
export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `
    CREATE TABLE logger_count_changes (
      id bigserial PRIMARY KEY,
      site_id uuid, registered_by uuid, model_id uuid NOT NULL, channel text NOT NULL, board text NOT NULL,
      status text NOT NULL, firmware text, firmware_key text[] COLLATE "C" NOT NULL, n integer NOT NULL
    );
    CREATE TABLE site_logger_counts (
      site_id uuid, registered_by uuid, model_id uuid NOT NULL, channel text NOT NULL, board text NOT NULL,
      status text NOT NULL, firmware text, firmware_key text[] COLLATE "C" NOT NULL, n integer NOT NULL,
      UNIQUE NULLS NOT DISTINCT (site_id, registered_by, model_id, channel, board, status, firmware)
    );
    CREATE INDEX site_logger_counts_registrar_idx ON site_logger_counts (registered_by);
    CREATE TABLE fleet_logger_counts (
      model_id uuid NOT NULL, channel text NOT NULL, board text NOT NULL, status text NOT NULL,
      firmware text, firmware_key text[] COLLATE "C" NOT NULL, n integer NOT NULL,
      UNIQUE NULLS NOT DISTINCT (model_id, channel, board, status, firmware)
    );

    CREATE TABLE report_count_changes (
      id bigserial PRIMARY KEY,
      release_id uuid NOT NULL, site_id uuid, registered_by uuid, board text NOT NULL, channel text NOT NULL,
      status text NOT NULL, state text NOT NULL, day date, n integer NOT NULL
    );
    CREATE TABLE site_report_counts (
      release_id uuid NOT NULL, site_id uuid, registered_by uuid, board text NOT NULL, channel text NOT NULL,
      status text NOT NULL, state text NOT NULL, day date, n integer NOT NULL,
      UNIQUE NULLS NOT DISTINCT (release_id, site_id, registered_by, board, channel, status, state, day)
    );
    CREATE INDEX site_report_counts_site_idx ON site_report_counts (site_id);
    CREATE INDEX site_report_counts_registrar_idx ON site_report_counts (registered_by);
    CREATE TABLE release_report_counts (
      release_id uuid NOT NULL, board text NOT NULL, channel text NOT NULL, status text NOT NULL, state text NOT NULL, day date, n integer NOT NULL,
      UNIQUE NULLS NOT DISTINCT (release_id, board, channel, status, state, day)
    );

    CREATE TABLE lagging_loggers (
      logger_id uuid PRIMARY KEY,
      site_id uuid NOT NULL,
      model_id uuid NOT NULL,
      firmware text NOT NULL,
      firmware_key text[] COLLATE "C" NOT NULL,
      target_release_id uuid NOT NULL,
      target_version text NOT NULL,
      since timestamptz NOT NULL,
      reason text NOT NULL,
      detail text NOT NULL,
      recheck_at timestamptz
    );
    CREATE INDEX lagging_loggers_site_idx ON lagging_loggers (site_id, firmware_key);
    CREATE INDEX lagging_loggers_model_idx ON lagging_loggers (model_id);
    CREATE INDEX lagging_loggers_recheck_idx ON lagging_loggers (recheck_at) WHERE recheck_at IS NOT NULL;
    CREATE TABLE lagging_sites (
      site_id uuid PRIMARY KEY,
      behind integer NOT NULL,
      oldest_version text,
      lagging_since timestamptz NOT NULL,
      reasons jsonb NOT NULL
    );
    CREATE INDEX lagging_sites_since_idx ON lagging_sites (lagging_since, site_id);
    CREATE INDEX lagging_sites_behind_idx ON lagging_sites (behind, site_id);

    CREATE TABLE summary_dirty_loggers (id bigserial PRIMARY KEY, logger_id uuid NOT NULL);
    CREATE TABLE summary_dirty_models (id bigserial PRIMARY KEY, model_id uuid NOT NULL);
    CREATE TABLE summary_state (name text PRIMARY KEY, as_of timestamptz);
    INSERT INTO summary_state (name, as_of) VALUES ('lagging', NULL);

    -- Logger counts and the lagging queue, from the rows a statement wrote.
    CREATE FUNCTION heliodor_summaries_loggers() RETURNS trigger LANGUAGE plpgsql SET search_path = public, pg_temp AS $fn$
    BEGIN
      IF TG_OP = 'INSERT' THEN
        INSERT INTO logger_count_changes (site_id, registered_by, model_id, channel, board, status, firmware, firmware_key, n)
          SELECT site_id, registered_by, model_id, channel, board, status, firmware, firmware_key, count(*) FROM new_rows
           GROUP BY site_id, registered_by, model_id, channel, board, status, firmware, firmware_key;
        INSERT INTO summary_dirty_loggers (logger_id) SELECT id FROM new_rows;
      ELSIF TG_OP = 'DELETE' THEN
        INSERT INTO logger_count_changes (site_id, registered_by, model_id, channel, board, status, firmware, firmware_key, n)
          SELECT site_id, registered_by, model_id, channel, board, status, firmware, firmware_key, -count(*) FROM old_rows
           GROUP BY site_id, registered_by, model_id, channel, board, status, firmware, firmware_key;
        INSERT INTO report_count_changes (release_id, site_id, registered_by, board, channel, status, state, day, n)
          SELECT ir.release_id, o.site_id, o.registered_by, o.board, o.channel, o.status, ir.state, (COALESCE(ir.confirmed_at, ir.finished_at) AT TIME ZONE 'UTC')::date, -count(*)
            FROM old_rows o JOIN install_reports ir ON ir.logger_id = o.id
           GROUP BY 1, 2, 3, 4, 5, 6, 7, 8;
        INSERT INTO summary_dirty_loggers (logger_id) SELECT id FROM old_rows;
      ELSE
        WITH moved AS (
          SELECT o.site_id AS o_site, o.registered_by AS o_reg, o.model_id AS o_model, o.channel AS o_channel, o.board AS o_board,
                 o.status AS o_status, o.firmware AS o_firmware, o.firmware_key AS o_key,
                 n.site_id, n.registered_by, n.model_id, n.channel, n.board, n.status, n.firmware, n.firmware_key
            FROM old_rows o JOIN new_rows n ON n.id = o.id
           WHERE (o.site_id, o.registered_by, o.model_id, o.channel, o.board, o.status, o.firmware)
                 IS DISTINCT FROM (n.site_id, n.registered_by, n.model_id, n.channel, n.board, n.status, n.firmware)
        )
        INSERT INTO logger_count_changes (site_id, registered_by, model_id, channel, board, status, firmware, firmware_key, n)
          SELECT site_id, registered_by, model_id, channel, board, status, firmware, firmware_key, sum(n) FROM (
            SELECT o_site AS site_id, o_reg AS registered_by, o_model AS model_id, o_channel AS channel, o_board AS board,
                   o_status AS status, o_firmware AS firmware, o_key AS firmware_key, -1 AS n FROM moved
            UNION ALL
            SELECT site_id, registered_by, model_id, channel, board, status, firmware, firmware_key, 1 FROM moved
          ) c GROUP BY site_id, registered_by, model_id, channel, board, status, firmware, firmware_key;
        -- A logger's install reports follow it into its new group (site, registrar, board, channel, status).
        WITH moved AS (
          SELECT o.id, o.site_id AS o_site, o.registered_by AS o_reg, o.board AS o_board, o.channel AS o_channel, o.status AS o_status,
                 n.site_id, n.registered_by, n.board, n.channel, n.status
            FROM old_rows o JOIN new_rows n ON n.id = o.id
           WHERE (o.site_id, o.registered_by, o.board, o.channel, o.status) IS DISTINCT FROM (n.site_id, n.registered_by, n.board, n.channel, n.status)
        )
        INSERT INTO report_count_changes (release_id, site_id, registered_by, board, channel, status, state, day, n)
          SELECT release_id, site_id, registered_by, board, channel, status, state, day, sum(n) FROM (
            SELECT ir.release_id, m.o_site AS site_id, m.o_reg AS registered_by, m.o_board AS board, m.o_channel AS channel,
                   m.o_status AS status, ir.state, (COALESCE(ir.confirmed_at, ir.finished_at) AT TIME ZONE 'UTC')::date AS day, -1 AS n
              FROM moved m JOIN install_reports ir ON ir.logger_id = m.id
            UNION ALL
            SELECT ir.release_id, m.site_id, m.registered_by, m.board, m.channel, m.status, ir.state, (COALESCE(ir.confirmed_at, ir.finished_at) AT TIME ZONE 'UTC')::date, 1
              FROM moved m JOIN install_reports ir ON ir.logger_id = m.id
          ) c GROUP BY release_id, site_id, registered_by, board, channel, status, state, day;
        -- What the offer decision and the silence threshold read of the logger.
        INSERT INTO summary_dirty_loggers (logger_id)
          SELECT n.id FROM old_rows o JOIN new_rows n ON n.id = o.id
           WHERE (o.site_id, o.model_id, o.channel, o.board, o.reported_board, o.status, o.firmware, o.supply_v, o.security_counter, o.last_seen_at)
                 IS DISTINCT FROM (n.site_id, n.model_id, n.channel, n.board, n.reported_board, n.status, n.firmware, n.supply_v, n.security_counter, n.last_seen_at);
      END IF;
      RETURN NULL;
    END $fn$;
    CREATE TRIGGER loggers_summaries_insert AFTER INSERT ON loggers REFERENCING NEW TABLE AS new_rows
      FOR EACH STATEMENT EXECUTE FUNCTION heliodor_summaries_loggers();
    CREATE TRIGGER loggers_summaries_update AFTER UPDATE ON loggers REFERENCING OLD TABLE AS old_rows NEW TABLE AS new_rows
      FOR EACH STATEMENT EXECUTE FUNCTION heliodor_summaries_loggers();
    CREATE TRIGGER loggers_summaries_delete AFTER DELETE ON loggers REFERENCING OLD TABLE AS old_rows
      FOR EACH STATEMENT EXECUTE FUNCTION heliodor_summaries_loggers();

    -- Report counts and the lagging queue, from the install reports a statement wrote.
    -- The day a report counts on for adoption: when the install was confirmed, else finished (UTC).
    CREATE FUNCTION heliodor_summaries_reports() RETURNS trigger LANGUAGE plpgsql SET search_path = public, pg_temp AS $fn$
    BEGIN
      IF TG_OP = 'INSERT' THEN
        INSERT INTO report_count_changes (release_id, site_id, registered_by, board, channel, status, state, day, n)
          SELECT n.release_id, l.site_id, l.registered_by, l.board, l.channel, l.status, n.state, (COALESCE(n.confirmed_at, n.finished_at) AT TIME ZONE 'UTC')::date, count(*)
            FROM new_rows n JOIN loggers l ON l.id = n.logger_id
           GROUP BY 1, 2, 3, 4, 5, 6, 7, 8;
        INSERT INTO summary_dirty_loggers (logger_id) SELECT DISTINCT logger_id FROM new_rows;
      ELSIF TG_OP = 'DELETE' THEN
        INSERT INTO report_count_changes (release_id, site_id, registered_by, board, channel, status, state, day, n)
          SELECT o.release_id, l.site_id, l.registered_by, l.board, l.channel, l.status, o.state, (COALESCE(o.confirmed_at, o.finished_at) AT TIME ZONE 'UTC')::date, -count(*)
            FROM old_rows o JOIN loggers l ON l.id = o.logger_id
           GROUP BY 1, 2, 3, 4, 5, 6, 7, 8;
        INSERT INTO summary_dirty_loggers (logger_id) SELECT DISTINCT logger_id FROM old_rows;
      ELSE
        -- A report whose state or day changed leaves its old group and joins the new one.
        INSERT INTO report_count_changes (release_id, site_id, registered_by, board, channel, status, state, day, n)
          SELECT c.release_id, l.site_id, l.registered_by, l.board, l.channel, l.status, c.state, c.day, sum(c.n)
            FROM (SELECT o.logger_id, o.release_id, o.state, (COALESCE(o.confirmed_at, o.finished_at) AT TIME ZONE 'UTC')::date AS day, -1 AS n
                    FROM old_rows o JOIN new_rows n ON n.logger_id = o.logger_id AND n.release_id = o.release_id
                   WHERE (o.state, (COALESCE(o.confirmed_at, o.finished_at) AT TIME ZONE 'UTC')::date) IS DISTINCT FROM (n.state, (COALESCE(n.confirmed_at, n.finished_at) AT TIME ZONE 'UTC')::date)
                  UNION ALL
                  SELECT n.logger_id, n.release_id, n.state, (COALESCE(n.confirmed_at, n.finished_at) AT TIME ZONE 'UTC')::date, 1
                    FROM old_rows o JOIN new_rows n ON n.logger_id = o.logger_id AND n.release_id = o.release_id
                   WHERE (o.state, (COALESCE(o.confirmed_at, o.finished_at) AT TIME ZONE 'UTC')::date) IS DISTINCT FROM (n.state, (COALESCE(n.confirmed_at, n.finished_at) AT TIME ZONE 'UTC')::date)) c
            JOIN loggers l ON l.id = c.logger_id
           GROUP BY c.release_id, l.site_id, l.registered_by, l.board, l.channel, l.status, c.state, c.day;
        INSERT INTO summary_dirty_loggers (logger_id) SELECT DISTINCT logger_id FROM new_rows;
      END IF;
      RETURN NULL;
    END $fn$;
    CREATE TRIGGER install_reports_summaries_insert AFTER INSERT ON install_reports REFERENCING NEW TABLE AS new_rows
      FOR EACH STATEMENT EXECUTE FUNCTION heliodor_summaries_reports();
    CREATE TRIGGER install_reports_summaries_update AFTER UPDATE ON install_reports REFERENCING OLD TABLE AS old_rows NEW TABLE AS new_rows
      FOR EACH STATEMENT EXECUTE FUNCTION heliodor_summaries_reports();
    CREATE TRIGGER install_reports_summaries_delete AFTER DELETE ON install_reports REFERENCING OLD TABLE AS old_rows
      FOR EACH STATEMENT EXECUTE FUNCTION heliodor_summaries_reports();

    -- A model's releases, their pilot sites, or the model's own guards changed: its loggers are recomputed.
    CREATE FUNCTION heliodor_summaries_model() RETURNS trigger LANGUAGE plpgsql SET search_path = public, pg_temp AS $fn$
    BEGIN
      IF TG_TABLE_NAME = 'models' THEN
        INSERT INTO summary_dirty_models (model_id) VALUES (COALESCE(NEW.id, OLD.id));
      ELSIF TG_TABLE_NAME = 'releases' THEN
        INSERT INTO summary_dirty_models (model_id) VALUES (COALESCE(NEW.model_id, OLD.model_id));
      ELSE
        INSERT INTO summary_dirty_models (model_id) SELECT r.model_id FROM releases r WHERE r.id = COALESCE(NEW.release_id, OLD.release_id);
      END IF;
      RETURN NULL;
    END $fn$;
    CREATE TRIGGER releases_summaries AFTER INSERT OR UPDATE OR DELETE ON releases
      FOR EACH ROW EXECUTE FUNCTION heliodor_summaries_model();
    CREATE TRIGGER release_pilot_sites_summaries AFTER INSERT OR UPDATE OR DELETE ON release_pilot_sites
      FOR EACH ROW EXECUTE FUNCTION heliodor_summaries_model();
    CREATE TRIGGER models_summaries AFTER UPDATE ON models
      FOR EACH ROW WHEN ((OLD.min_update_supply_v, OLD.check_in_interval_s) IS DISTINCT FROM (NEW.min_update_supply_v, NEW.check_in_interval_s))
      EXECUTE FUNCTION heliodor_summaries_model();

    -- A site's coordinates (the daylight window) changed: its loggers are recomputed.
    CREATE FUNCTION heliodor_summaries_site() RETURNS trigger LANGUAGE plpgsql SET search_path = public, pg_temp AS $fn$
    BEGIN
      INSERT INTO summary_dirty_loggers (logger_id) SELECT l.id FROM loggers l WHERE l.site_id = NEW.id;
      RETURN NULL;
    END $fn$;
    CREATE TRIGGER sites_summaries AFTER UPDATE ON sites
      FOR EACH ROW WHEN ((OLD.latitude, OLD.longitude) IS DISTINCT FROM (NEW.latitude, NEW.longitude))
      EXECUTE FUNCTION heliodor_summaries_site();

    -- The counts as they stand, and every model queued so the worker's first run computes every lagging logger.
    INSERT INTO site_logger_counts (site_id, registered_by, model_id, channel, board, status, firmware, firmware_key, n)
      SELECT site_id, registered_by, model_id, channel, board, status, firmware, firmware_key, count(*) FROM loggers
       GROUP BY site_id, registered_by, model_id, channel, board, status, firmware, firmware_key;
    INSERT INTO fleet_logger_counts (model_id, channel, board, status, firmware, firmware_key, n)
      SELECT model_id, channel, board, status, firmware, firmware_key, sum(n) FROM site_logger_counts
       GROUP BY model_id, channel, board, status, firmware, firmware_key;
    INSERT INTO site_report_counts (release_id, site_id, registered_by, board, channel, status, state, day, n)
      SELECT ir.release_id, l.site_id, l.registered_by, l.board, l.channel, l.status, ir.state, (COALESCE(ir.confirmed_at, ir.finished_at) AT TIME ZONE 'UTC')::date, count(*)
        FROM install_reports ir JOIN loggers l ON l.id = ir.logger_id
       GROUP BY 1, 2, 3, 4, 5, 6, 7, 8;
    INSERT INTO release_report_counts (release_id, board, channel, status, state, day, n)
      SELECT release_id, board, channel, status, state, day, sum(n) FROM site_report_counts GROUP BY release_id, board, channel, status, state, day;
    INSERT INTO summary_dirty_models (model_id) SELECT id FROM models;

    -- Flag counts at request time: each flag's loggers by an index range.
    CREATE INDEX loggers_silence_idx ON loggers (model_id, last_seen_at) WHERE status = 'enrolled';
    CREATE INDEX loggers_supply_idx ON loggers (model_id, supply_v) WHERE supply_v IS NOT NULL;
    CREATE INDEX loggers_resets_idx ON loggers (id) WHERE recent_resets <> '{}';
    CREATE INDEX loggers_probe_idx ON loggers ((CASE WHEN jsonb_typeof(readings->'temp_c') = 'number' THEN (readings->>'temp_c')::float8 END));
    CREATE INDEX install_reports_done_idx ON install_reports (release_id, (COALESCE(confirmed_at, finished_at))) WHERE state = 'installed';
    `,
    { transaction },
  );
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `DROP INDEX install_reports_done_idx; DROP INDEX loggers_probe_idx; DROP INDEX loggers_resets_idx; DROP INDEX loggers_supply_idx; DROP INDEX loggers_silence_idx;
     DROP TRIGGER sites_summaries ON sites; DROP FUNCTION heliodor_summaries_site();
     DROP TRIGGER models_summaries ON models; DROP TRIGGER release_pilot_sites_summaries ON release_pilot_sites; DROP TRIGGER releases_summaries ON releases;
     DROP FUNCTION heliodor_summaries_model();
     DROP TRIGGER install_reports_summaries_delete ON install_reports; DROP TRIGGER install_reports_summaries_update ON install_reports;
     DROP TRIGGER install_reports_summaries_insert ON install_reports; DROP FUNCTION heliodor_summaries_reports();
     DROP TRIGGER loggers_summaries_delete ON loggers; DROP TRIGGER loggers_summaries_update ON loggers; DROP TRIGGER loggers_summaries_insert ON loggers;
     DROP FUNCTION heliodor_summaries_loggers();
     DROP TABLE summary_state; DROP TABLE summary_dirty_models; DROP TABLE summary_dirty_loggers;
     DROP TABLE lagging_sites; DROP TABLE lagging_loggers;
     DROP TABLE release_report_counts; DROP TABLE site_report_counts; DROP TABLE report_count_changes;
     DROP TABLE fleet_logger_counts; DROP TABLE site_logger_counts; DROP TABLE logger_count_changes;`,
    { transaction },
  );
}
