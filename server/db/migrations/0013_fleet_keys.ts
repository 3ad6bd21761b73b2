import type { Sequelize, Transaction } from 'sequelize';

// The fleet table answers from index ranges at 100 000 loggers: every sort key lives on the logger row
// with an index on (key, id), so page 1 and a keyset page deep in the list are both a short index range,
// and the text search has a trigram index.
//
// Kept on the logger row:
// - site_sort, customer_sort, model_sort: lower(site name), lower(customer) ('' without a site) and
//   lower(model name), the keys the table sorts by;
// - search_text: serial, site name and customer in one text (a line feed between them), searched with
//   ILIKE through a pg_trgm GIN index (PostgreSQL manual, F.35 pg_trgm: "Index Support");
// - update_state: where the logger stands with the current release of its model and channel (the words
//   of UPDATE_STATES in schemas/words.ts, as of this migration), and update_rank, its place in the
//   pipeline order the table sorts by (generated from update_state);
// - resets_24h and resets_oldest, generated from recent_resets (the times of watchdog and brown-out
//   resets the check-in history trigger of migration 0006 keeps): how many it holds, and the oldest.
//   The window slides, so a reset leaves recent_resets once it is 24 h old: the fleet table trims the
//   arrays whose oldest reset has left the window (resets_oldest, indexed) before it sorts or filters by
//   resets, and shows the count computed from the array at its own clock. See server/fleet/table.ts.
// - fleet_current_releases: the current release of each model and channel (the highest release by
//   semantic-version precedence that reached widening or complete and was not withdrawn, as
//   server/fleet/sql.ts CURRENT_RELEASES reads it), which update_state is judged against.
//
// Why triggers: these keys change through many writers — a site rename or a customer change, a model
// rename, a release becoming current or withdrawn (applyTransition, the trip), an install report or a
// retry, a logger's firmware changing at check-in, a move or an enrollment, the demo and bench seeds
// and a restore. A trigger keeps each key in the same transaction as the write that changes it, for
// every writer present and future, and adds no statement to the check-in (a quiet check-in changes none
// of the columns the triggers watch, so none of them runs; tests/api/device-statements.test.ts).
// The trigger functions that name Heliodor's tables carry their search_path (migration 0011).
//
// A release becoming current rewrites update_state for every logger of its model and channel in the
// transition's transaction (once per widen or withdraw; about a second per 50 000 loggers).

const UPDATE_RANK = `CASE s WHEN 'behind' THEN 0 WHEN 'failed' THEN 1 WHEN 'offered' THEN 2 WHEN 'downloading' THEN 3
  WHEN 'downloaded' THEN 4 WHEN 'installing' THEN 5 WHEN 'installed' THEN 6 ELSE 7 END`;

export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `
    CREATE EXTENSION IF NOT EXISTS pg_trgm;

    CREATE TABLE fleet_current_releases (
      model_id uuid NOT NULL REFERENCES models(id) ON DELETE CASCADE,
      channel text NOT NULL,
      release_id uuid NOT NULL REFERENCES releases(id) ON DELETE CASCADE,
      version_key text[] COLLATE "C" NOT NULL,
      PRIMARY KEY (model_id, channel)
    );

    -- Pipeline order for sorting by update state: nothing yet, then the funnel, then done.
    CREATE FUNCTION heliodor_update_rank(s text) RETURNS integer LANGUAGE sql IMMUTABLE PARALLEL SAFE
      AS $fn$ SELECT ${UPDATE_RANK} $fn$;

    CREATE FUNCTION heliodor_resets_oldest(resets timestamptz[]) RETURNS timestamptz LANGUAGE sql IMMUTABLE PARALLEL SAFE
      AS $fn$ SELECT min(r.at) FROM unnest(resets) AS r(at) $fn$;

    -- The update state of one logger against its current release and its report for that release.
    -- A failed report an operator has since retried reads as offered again.
    CREATE FUNCTION heliodor_update_state(logger uuid, model uuid, chan text, firmware text) RETURNS text LANGUAGE sql STABLE
      SET search_path = public, pg_temp
      AS $fn$
        SELECT CASE
                 WHEN c.release_id IS NULL OR firmware IS NULL THEN 'behind'
                 WHEN heliodor_semver_key(firmware) COLLATE "C" >= c.version_key COLLATE "C" THEN 'up_to_date'
                 WHEN ir.state IS NULL THEN 'behind'
                 WHEN ir.state = 'failed' AND ir.retried_at IS NOT NULL AND ir.retried_at >= ir.updated_at THEN 'offered'
                 ELSE ir.state END
          FROM (SELECT 1) one
          LEFT JOIN fleet_current_releases c ON c.model_id = model AND c.channel = chan
          LEFT JOIN install_reports ir ON ir.logger_id = logger AND ir.release_id = c.release_id
      $fn$;

    ALTER TABLE loggers
      ADD COLUMN site_sort text NOT NULL DEFAULT '',
      ADD COLUMN customer_sort text NOT NULL DEFAULT '',
      ADD COLUMN model_sort text NOT NULL DEFAULT '',
      ADD COLUMN search_text text NOT NULL DEFAULT '',
      ADD COLUMN update_state text NOT NULL DEFAULT 'behind',
      ADD COLUMN update_rank integer GENERATED ALWAYS AS (heliodor_update_rank(update_state)) STORED,
      ADD COLUMN resets_24h integer GENERATED ALWAYS AS (cardinality(recent_resets)) STORED,
      ADD COLUMN resets_oldest timestamptz GENERATED ALWAYS AS (heliodor_resets_oldest(recent_resets)) STORED;

    -- A logger's own keys, when it is written with a new serial, site, model, channel or firmware.
    CREATE FUNCTION heliodor_logger_keys() RETURNS trigger LANGUAGE plpgsql SET search_path = public, pg_temp AS $fn$
    DECLARE
      site record;
    BEGIN
      SELECT s.name, s.customer INTO site FROM sites s WHERE s.id = NEW.site_id;
      NEW.site_sort := COALESCE(lower(site.name), '');
      NEW.customer_sort := COALESCE(lower(site.customer), '');
      NEW.model_sort := COALESCE((SELECT lower(m.name) FROM models m WHERE m.id = NEW.model_id), '');
      NEW.search_text := concat_ws(E'\\n', NEW.serial, site.name, site.customer);
      NEW.update_state := heliodor_update_state(NEW.id, NEW.model_id, NEW.channel, NEW.firmware);
      RETURN NEW;
    END $fn$;
    CREATE TRIGGER loggers_keys_insert BEFORE INSERT ON loggers FOR EACH ROW EXECUTE FUNCTION heliodor_logger_keys();
    CREATE TRIGGER loggers_keys_update BEFORE UPDATE ON loggers FOR EACH ROW
      WHEN (OLD.serial IS DISTINCT FROM NEW.serial OR OLD.site_id IS DISTINCT FROM NEW.site_id OR OLD.model_id IS DISTINCT FROM NEW.model_id
            OR OLD.channel IS DISTINCT FROM NEW.channel OR OLD.firmware IS DISTINCT FROM NEW.firmware)
      EXECUTE FUNCTION heliodor_logger_keys();

    -- A site renamed or given another customer: its loggers' keys.
    CREATE FUNCTION heliodor_site_keys() RETURNS trigger LANGUAGE plpgsql SET search_path = public, pg_temp AS $fn$
    BEGIN
      UPDATE loggers SET site_sort = COALESCE(lower(NEW.name), ''), customer_sort = COALESCE(lower(NEW.customer), ''),
                         search_text = concat_ws(E'\\n', serial, NEW.name, NEW.customer)
       WHERE site_id = NEW.id;
      RETURN NULL;
    END $fn$;
    CREATE TRIGGER sites_keys AFTER UPDATE ON sites FOR EACH ROW
      WHEN (OLD.name IS DISTINCT FROM NEW.name OR OLD.customer IS DISTINCT FROM NEW.customer)
      EXECUTE FUNCTION heliodor_site_keys();

    -- A model renamed: its loggers' key.
    CREATE FUNCTION heliodor_model_keys() RETURNS trigger LANGUAGE plpgsql SET search_path = public, pg_temp AS $fn$
    BEGIN
      UPDATE loggers SET model_sort = lower(NEW.name) WHERE model_id = NEW.id;
      RETURN NULL;
    END $fn$;
    CREATE TRIGGER models_keys AFTER UPDATE ON models FOR EACH ROW
      WHEN (OLD.name IS DISTINCT FROM NEW.name) EXECUTE FUNCTION heliodor_model_keys();

    -- The current release of one model and channel, kept; when it changes, the update state of the
    -- model's loggers on that channel.
    CREATE FUNCTION heliodor_refresh_current_release(model uuid, chan text) RETURNS void LANGUAGE plpgsql SET search_path = public, pg_temp AS $fn$
    DECLARE
      latest record;
      kept record;
    BEGIN
      SELECT r.id, heliodor_semver_key(r.version) COLLATE "C" AS version_key INTO latest
        FROM releases r
       WHERE r.model_id = model AND r.channel = chan AND (r.widened_at IS NOT NULL OR r.completed_at IS NOT NULL) AND r.state <> 'withdrawn'
       ORDER BY heliodor_semver_key(r.version) COLLATE "C" DESC LIMIT 1;
      SELECT c.release_id, c.version_key INTO kept FROM fleet_current_releases c WHERE c.model_id = model AND c.channel = chan FOR UPDATE;
      IF latest.id IS NOT DISTINCT FROM kept.release_id AND latest.version_key IS NOT DISTINCT FROM kept.version_key THEN
        RETURN;
      END IF;
      IF latest.id IS NULL THEN
        DELETE FROM fleet_current_releases WHERE model_id = model AND channel = chan;
      ELSE
        INSERT INTO fleet_current_releases (model_id, channel, release_id, version_key) VALUES (model, chan, latest.id, latest.version_key)
          ON CONFLICT (model_id, channel) DO UPDATE SET release_id = EXCLUDED.release_id, version_key = EXCLUDED.version_key;
      END IF;
      UPDATE loggers l SET update_state = u.state
        FROM (SELECT x.id, heliodor_update_state(x.id, x.model_id, x.channel, x.firmware) AS state
                FROM loggers x WHERE x.model_id = model AND x.channel = chan) u
       WHERE l.id = u.id AND l.update_state IS DISTINCT FROM u.state;
    END $fn$;

    CREATE FUNCTION heliodor_release_keys() RETURNS trigger LANGUAGE plpgsql SET search_path = public, pg_temp AS $fn$
    BEGIN
      IF TG_OP <> 'INSERT' THEN PERFORM heliodor_refresh_current_release(OLD.model_id, OLD.channel); END IF;
      IF TG_OP <> 'DELETE' AND (TG_OP = 'INSERT' OR OLD.model_id IS DISTINCT FROM NEW.model_id OR OLD.channel IS DISTINCT FROM NEW.channel) THEN
        PERFORM heliodor_refresh_current_release(NEW.model_id, NEW.channel);
      END IF;
      RETURN NULL;
    END $fn$;
    CREATE TRIGGER releases_keys_insert AFTER INSERT OR DELETE ON releases FOR EACH ROW EXECUTE FUNCTION heliodor_release_keys();
    CREATE TRIGGER releases_keys_update AFTER UPDATE ON releases FOR EACH ROW
      WHEN (OLD.state IS DISTINCT FROM NEW.state OR OLD.widened_at IS DISTINCT FROM NEW.widened_at OR OLD.completed_at IS DISTINCT FROM NEW.completed_at
            OR OLD.version IS DISTINCT FROM NEW.version OR OLD.model_id IS DISTINCT FROM NEW.model_id OR OLD.channel IS DISTINCT FROM NEW.channel)
      EXECUTE FUNCTION heliodor_release_keys();

    -- An install report written, retried or removed: its logger's update state.
    CREATE FUNCTION heliodor_report_keys() RETURNS trigger LANGUAGE plpgsql SET search_path = public, pg_temp AS $fn$
    DECLARE
      logger uuid := CASE WHEN TG_OP = 'DELETE' THEN OLD.logger_id ELSE NEW.logger_id END;
    BEGIN
      UPDATE loggers l SET update_state = u.state
        FROM (SELECT heliodor_update_state(x.id, x.model_id, x.channel, x.firmware) AS state FROM loggers x WHERE x.id = logger) u
       WHERE l.id = logger AND l.update_state IS DISTINCT FROM u.state;
      RETURN NULL;
    END $fn$;
    CREATE TRIGGER install_reports_keys_insert AFTER INSERT OR DELETE ON install_reports FOR EACH ROW EXECUTE FUNCTION heliodor_report_keys();
    CREATE TRIGGER install_reports_keys_update AFTER UPDATE ON install_reports FOR EACH ROW
      WHEN (OLD.state IS DISTINCT FROM NEW.state OR OLD.retried_at IS DISTINCT FROM NEW.retried_at OR OLD.updated_at IS DISTINCT FROM NEW.updated_at
            OR OLD.release_id IS DISTINCT FROM NEW.release_id OR OLD.logger_id IS DISTINCT FROM NEW.logger_id)
      EXECUTE FUNCTION heliodor_report_keys();

    -- The keys of the loggers already registered.
    INSERT INTO fleet_current_releases (model_id, channel, release_id, version_key)
      SELECT DISTINCT ON (r.model_id, r.channel) r.model_id, r.channel, r.id, heliodor_semver_key(r.version) COLLATE "C"
        FROM releases r
       WHERE (r.widened_at IS NOT NULL OR r.completed_at IS NOT NULL) AND r.state <> 'withdrawn'
       ORDER BY r.model_id, r.channel, heliodor_semver_key(r.version) COLLATE "C" DESC;
    UPDATE loggers l
       SET site_sort = COALESCE(lower(s.name), ''), customer_sort = COALESCE(lower(s.customer), ''), model_sort = lower(m.name),
           search_text = concat_ws(E'\\n', l.serial, s.name, s.customer),
           update_state = heliodor_update_state(l.id, l.model_id, l.channel, l.firmware)
      FROM models m, loggers x LEFT JOIN sites s ON s.id = x.site_id
     WHERE m.id = l.model_id AND x.id = l.id;

    CREATE INDEX loggers_sort_site_idx ON loggers (site_sort, id);
    CREATE INDEX loggers_sort_customer_idx ON loggers (customer_sort, id);
    CREATE INDEX loggers_sort_model_idx ON loggers (model_sort, id);
    CREATE INDEX loggers_sort_update_idx ON loggers (update_rank, id);
    CREATE INDEX loggers_sort_resets_idx ON loggers (resets_24h, id);
    CREATE INDEX loggers_resets_oldest_idx ON loggers (resets_oldest) WHERE resets_oldest IS NOT NULL;
    CREATE INDEX loggers_search_idx ON loggers USING gin (search_text gin_trgm_ops);
    `,
    { transaction },
  );
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `DROP TRIGGER install_reports_keys_update ON install_reports; DROP TRIGGER install_reports_keys_insert ON install_reports;
     DROP FUNCTION heliodor_report_keys();
     DROP TRIGGER releases_keys_update ON releases; DROP TRIGGER releases_keys_insert ON releases;
     DROP FUNCTION heliodor_release_keys(); DROP FUNCTION heliodor_refresh_current_release(uuid, text);
     DROP TRIGGER models_keys ON models; DROP FUNCTION heliodor_model_keys();
     DROP TRIGGER sites_keys ON sites; DROP FUNCTION heliodor_site_keys();
     DROP TRIGGER loggers_keys_update ON loggers; DROP TRIGGER loggers_keys_insert ON loggers; DROP FUNCTION heliodor_logger_keys();
     ALTER TABLE loggers DROP COLUMN resets_oldest, DROP COLUMN resets_24h, DROP COLUMN update_rank, DROP COLUMN update_state,
                         DROP COLUMN search_text, DROP COLUMN model_sort, DROP COLUMN customer_sort, DROP COLUMN site_sort;
     DROP FUNCTION heliodor_update_state(uuid, uuid, text, text); DROP FUNCTION heliodor_resets_oldest(timestamptz[]);
     DROP FUNCTION heliodor_update_rank(text);
     DROP TABLE fleet_current_releases;`,
    { transaction },
  );
}
