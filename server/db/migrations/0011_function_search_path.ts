// Some of Heliodor's SQL functions name another function or a table without a schema. pg_restore (and
// pg_dump's own scripts) run with an empty search_path, so heliodor_semver_key — which the generated
// column loggers.firmware_key runs for every restored row, and which calls heliodor_semver_number — would
// not find it, and a restore would fail. Those functions now carry their search_path (PostgreSQL manual,
// CREATE FUNCTION: "SET configuration_parameter"). Functions that use only built-ins (always found in
// pg_catalog) are left as they are, so PostgreSQL may still inline them into queries. A new function that
// names Heliodor's own objects must set its search_path too.
import type { Sequelize, Transaction } from 'sequelize';

/** The functions that name Heliodor's own functions or tables. */
const FUNCTIONS = ['heliodor_semver_key(text)', 'heliodor_track_resets()', 'heliodor_notify_release_change()'];

const forEachFunction = (action: string) => FUNCTIONS.map((f) => `ALTER FUNCTION ${f} ${action};`).join('\n');

export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(forEachFunction('SET search_path = public, pg_temp'), { transaction });
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(forEachFunction('RESET search_path'), { transaction });
}
