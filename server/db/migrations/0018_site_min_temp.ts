// A site's lowest expected ambient temperature (°C, optional): the wiring check raises the panel's
// open-circuit voltage for the cold before comparing it with the model's panel voltage limit
// (NEC 2023 690.7(A); docs/SOURCES.md §14). Bounded like the API's schema.
import type { Sequelize, Transaction } from 'sequelize';

export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `ALTER TABLE sites ADD COLUMN min_temp_c double precision NULL
       CONSTRAINT sites_min_temp_c_range CHECK (min_temp_c BETWEEN -60 AND 50);`,
    { transaction },
  );
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(`ALTER TABLE sites DROP COLUMN min_temp_c;`, { transaction });
}
