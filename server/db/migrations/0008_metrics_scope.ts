// API tokens may carry the `metrics:read` scope: a monitoring scraper reads GET /metrics with one.
import type { Sequelize, Transaction } from 'sequelize';

const scopesCheck = (scopes: string[]) =>
  `ALTER TABLE api_tokens DROP CONSTRAINT api_tokens_scopes_check,
     ADD CONSTRAINT api_tokens_scopes_check CHECK (scopes <@ ARRAY[${scopes.map((s) => `'${s}'`).join(', ')}]::text[] AND cardinality(scopes) > 0)`;

export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(scopesCheck(['images:write', 'releases:write', 'fleet:read', 'metrics:read']), { transaction });
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  // A token with only this scope has nothing left to do; the others keep their other scopes.
  await sequelize.query(`DELETE FROM api_tokens WHERE scopes = ARRAY['metrics:read']::text[]`, { transaction });
  await sequelize.query(`UPDATE api_tokens SET scopes = array_remove(scopes, 'metrics:read') WHERE 'metrics:read' = ANY (scopes)`, { transaction });
  await sequelize.query(scopesCheck(['images:write', 'releases:write', 'fleet:read']), { transaction });
}
