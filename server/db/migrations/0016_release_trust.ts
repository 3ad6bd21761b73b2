// Release trust beyond one key (server/images/trust.ts):
// - models.signing_threshold: how many distinct registered, unrevoked keys must sign a release (k of n);
// - release_signatures: every signature a release has gathered, one per key. The releases row keeps its
//   first signature (signature, signing_key_id) as before; a trigger copies it here on insert, so every
//   path that creates a release (upload, demo seed) starts the list alike;
// - releases.expires_at: the manifest's `expires`, when it carries one;
// - trust_sets and trust_set_signatures: each model's numbered trust set (its canonical bytes) and the
//   signatures the previous set's keys gave it. A set without signed_at is pending (at most one per
//   model) and is not served to loggers. Version 1 of each existing model is written here from the
//   registered keys that are not revoked, with threshold 1: the set loggers already hold.
import type { Sequelize, Transaction } from 'sequelize';
import { QueryTypes } from 'sequelize';
import canonicalize from 'canonicalize';

/** A trust set is meant for a year; its successors carry their own expiry. */
const TRUST_SET_LIFETIME_MS = 365 * 24 * 3600 * 1000;

export async function up(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `ALTER TABLE models ADD COLUMN signing_threshold integer NOT NULL DEFAULT 1 CHECK (signing_threshold BETWEEN 1 AND 16);
     ALTER TABLE releases ADD COLUMN expires_at timestamptz;

     CREATE TABLE release_signatures (
       release_id uuid NOT NULL REFERENCES releases(id) ON DELETE CASCADE,
       signing_key_id uuid NOT NULL REFERENCES signing_keys(id),
       signature bytea NOT NULL CHECK (octet_length(signature) = 64),
       seq bigint GENERATED ALWAYS AS IDENTITY,
       added_at timestamptz NOT NULL DEFAULT now(),
       added_by text NOT NULL DEFAULT '',
       PRIMARY KEY (release_id, signing_key_id)
     );
     CREATE INDEX release_signatures_key_idx ON release_signatures (signing_key_id);
     INSERT INTO release_signatures (release_id, signing_key_id, signature, added_at, added_by)
       SELECT id, signing_key_id, signature, created_at, 'upload' FROM releases ORDER BY created_at, id;

     CREATE FUNCTION heliodor_first_release_signature() RETURNS trigger LANGUAGE plpgsql
       SET search_path = public, pg_temp AS $fn$
     BEGIN
       INSERT INTO release_signatures (release_id, signing_key_id, signature, added_at, added_by)
         VALUES (NEW.id, NEW.signing_key_id, NEW.signature, NEW.created_at, 'upload')
         ON CONFLICT DO NOTHING;
       RETURN NULL;
     END $fn$;
     CREATE TRIGGER releases_first_signature AFTER INSERT ON releases
       FOR EACH ROW EXECUTE FUNCTION heliodor_first_release_signature();
     -- A gathered signature changes what an offer carries: the release caches drop the model.
     CREATE TRIGGER release_signatures_notify AFTER INSERT OR UPDATE OR DELETE ON release_signatures
       FOR EACH STATEMENT EXECUTE FUNCTION heliodor_notify_release_change();

     CREATE TABLE trust_sets (
       model_id uuid NOT NULL REFERENCES models(id) ON DELETE CASCADE,
       version integer NOT NULL CHECK (version >= 1),
       body bytea NOT NULL,
       threshold integer NOT NULL CHECK (threshold >= 1),
       expires_at timestamptz NOT NULL,
       created_at timestamptz NOT NULL DEFAULT now(),
       signed_at timestamptz,
       PRIMARY KEY (model_id, version)
     );
     CREATE UNIQUE INDEX trust_sets_one_pending ON trust_sets (model_id) WHERE signed_at IS NULL;
     CREATE TABLE trust_set_signatures (
       model_id uuid NOT NULL,
       version integer NOT NULL,
       signing_key_id uuid NOT NULL REFERENCES signing_keys(id),
       signature bytea NOT NULL CHECK (octet_length(signature) = 64),
       added_at timestamptz NOT NULL DEFAULT now(),
       PRIMARY KEY (model_id, version, signing_key_id),
       FOREIGN KEY (model_id, version) REFERENCES trust_sets (model_id, version) ON DELETE CASCADE
     );`,
    { transaction },
  );

  // Version 1 of every model: the unrevoked keys (base64 of the DER SubjectPublicKeyInfo, which is the
  // body of the normalized PEM), threshold 1, in the canonical form of server/images/trust.ts.
  const keys = await sequelize.query<{ key_id: string; algorithm: string; public_key_pem: string }>(
    "SELECT key_id, algorithm, public_key_pem FROM signing_keys WHERE state <> 'revoked' ORDER BY key_id",
    { type: QueryTypes.SELECT, transaction },
  );
  if (keys.length === 0) return;
  const entries = keys.map((k) => ({
    key_id: k.key_id.trim(),
    algorithm: k.algorithm,
    public_key: k.public_key_pem.replace(/-----(BEGIN|END) PUBLIC KEY-----/g, '').replace(/\s+/g, ''),
  }));
  const models = await sequelize.query<{ id: string }>('SELECT id FROM models ORDER BY id', { type: QueryTypes.SELECT, transaction });
  const now = new Date();
  const expires = new Date(now.getTime() + TRUST_SET_LIFETIME_MS).toISOString().replace(/\.\d{3}Z$/, 'Z');
  for (const m of models) {
    const body = canonicalize({ expires, keys: entries, model: m.id, threshold: 1, version: 1 }) as string;
    await sequelize.query(
      'INSERT INTO trust_sets (model_id, version, body, threshold, expires_at, created_at, signed_at) VALUES (:model, 1, :body, 1, :expires, :now, :now)',
      { transaction, replacements: { model: m.id, body: Buffer.from(body, 'utf8'), expires, now: now.toISOString() } },
    );
  }
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  await sequelize.query(
    `DROP TABLE trust_set_signatures; DROP TABLE trust_sets;
     DROP TRIGGER releases_first_signature ON releases; DROP FUNCTION heliodor_first_release_signature();
     DROP TABLE release_signatures;
     ALTER TABLE releases DROP COLUMN expires_at; ALTER TABLE models DROP COLUMN signing_threshold;`,
    { transaction },
  );
}
