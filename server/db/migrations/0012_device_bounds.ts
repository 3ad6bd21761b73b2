// What the device API keeps, sized to what the contract lets a logger send:
// - Security counters (a logger's, each check-in's, a release's) become bigint. The manifest's counter
//   is SUIT's monotonic sequence number, which may be time-based (RFC 9124 §4.3.1; docs/SOURCES.md §5),
//   so it can pass 2^31 − 1; the API bounds it at 2^53 − 1, the largest integer a JSON number carries
//   exactly (I-JSON, RFC 7493 §2.2).
// - The reset trigger adds watchdog and brown-out counts as bigint, so two large counts cannot overflow
//   an integer (each count is at most 2^31 − 1 by the API's bounds).
// - An install report may now exist without an offer: a logger reporting on the release it runs, never
//   offered to it, gets a row with no offer time, and the image route serves only offered images.
import type { Sequelize, Transaction } from 'sequelize';

const TRACK_RESETS = (n: 'integer' | 'bigint') => `
  CREATE OR REPLACE FUNCTION heliodor_track_resets() RETURNS trigger LANGUAGE plpgsql SET search_path = public, pg_temp AS $fn$
  DECLARE
    n ${n} := COALESCE((NEW.resets->>'watchdog')::${n}, 0) + COALESCE((NEW.resets->>'brownout')::${n}, 0);
  BEGIN
    IF n > 0 THEN
      UPDATE loggers SET recent_resets = (
        SELECT COALESCE(array_agg(k.at ORDER BY k.at), '{}')
          FROM (SELECT r.at FROM unnest(recent_resets || array_fill(NEW.at, ARRAY[LEAST(n, 32)::integer])) AS r(at)
                 WHERE r.at > NEW.at - interval '24 hours' ORDER BY r.at DESC LIMIT 32) k
      ) WHERE id = NEW.logger_id;
    END IF;
    RETURN NULL;
  END $fn$;`;

export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `ALTER TABLE loggers ALTER COLUMN security_counter TYPE bigint;
     ALTER TABLE check_ins ALTER COLUMN security_counter TYPE bigint;
     ALTER TABLE releases ALTER COLUMN security_counter TYPE bigint;
     ALTER TABLE install_reports ALTER COLUMN offered_at DROP NOT NULL;
     ${TRACK_RESETS('bigint')}`,
    { transaction },
  );
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `${TRACK_RESETS('integer')}
     UPDATE install_reports SET offered_at = updated_at WHERE offered_at IS NULL;
     ALTER TABLE install_reports ALTER COLUMN offered_at SET NOT NULL;
     ALTER TABLE releases ALTER COLUMN security_counter TYPE integer;
     ALTER TABLE check_ins ALTER COLUMN security_counter TYPE integer;
     ALTER TABLE loggers ALTER COLUMN security_counter TYPE integer;`,
    { transaction },
  );
}
