// A release's signatures against its model's signing rule (k of n registered keys), judged by the one
// threshold rule (server/images/trust.ts): valid signatures over the exact manifest bytes from at least
// k DISTINCT registered keys that are not revoked. The upload brings one or more signatures; a draft
// gathers more later (POST /api/releases/:id/signatures); its pilot starts only once the rule is met.
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { SigningKey } from '../db/models';
import { parsePublicKeyPem } from '../images/manifest';
import { judgeThreshold, type WireSignature } from '../images/trust';
import type { ReleaseSigningView } from '../../schemas/releases';
import type { KeyState } from '../../schemas/keys';

const REVOKED: KeyState = 'revoked';

type Stored = { keyId: string; algorithm: WireSignature['algorithm']; signature: Buffer };

/** The release's gathered signatures, oldest first (the first is the one the offer's single fields carry). */
export async function storedSignatures(sequelize: Sequelize, releaseId: string, t?: Transaction): Promise<Stored[]> {
  const rows = await sequelize.query<Stored>(
    `SELECT k.key_id AS "keyId", k.algorithm, s.signature
       FROM release_signatures s JOIN signing_keys k ON k.id = s.signing_key_id
      WHERE s.release_id = :releaseId ORDER BY s.seq`,
    { type: QueryTypes.SELECT, transaction: t, replacements: { releaseId } },
  );
  return rows.map((r) => ({ ...r, keyId: r.keyId.trim() }));
}

export const wireOf = (rows: Stored[]): WireSignature[] => rows.map((r) => ({ key_id: r.keyId, algorithm: r.algorithm, signature: r.signature.toString('base64') }));

/** Where a release stands against its model's rule: who signed, who has not, and whether it is met. */
export async function releaseSigning(
  sequelize: Sequelize,
  release: { id: string; manifest: Buffer },
  threshold: number,
  t?: Transaction,
): Promise<ReleaseSigningView> {
  const [stored, keys] = await Promise.all([storedSignatures(sequelize, release.id, t), SigningKey.findAll({ transaction: t, order: [['createdAt', 'ASC']] })]);
  const unrevoked = keys.filter((k) => k.state !== REVOKED);
  const verdict = judgeThreshold(release.manifest, wireOf(stored), unrevoked.map((k) => parsePublicKeyPem(k.publicKeyPem)), threshold);
  const byKeyId = new Map(keys.map((k) => [k.keyId, k]));
  const named = (keyId: string) => ({ keyId, name: byKeyId.get(keyId)?.name ?? '', state: (byKeyId.get(keyId)?.state ?? REVOKED) as KeyState });
  return {
    threshold,
    met: verdict.met,
    signedBy: verdict.signedBy.map(named),
    // Signatures kept from keys revoked since: shown, never counted.
    revokedSigners: stored.filter((s) => byKeyId.get(s.keyId)?.state === REVOKED).map((s) => named(s.keyId)),
    missing: verdict.missing.map(named),
  };
}
