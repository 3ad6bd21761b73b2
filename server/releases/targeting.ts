// The releases of a model as the offer decision reads them: every release that left draft, with its
// targeting (channel, state, share, boards, upgrade-from range, pilot sites, daylight window), its
// trip points and what an offer carries (manifest, signature, key, image). The check-in reads them
// through its per-process cache (server/device-api/release-cache.ts); "Why no update?" and the lagging
// sites read them directly, so all three decide on the same releases.
import type { Sequelize } from 'sequelize';
import { QueryTypes } from 'sequelize';
import { parseTargeting, type ReleaseTargeting } from '../rollout/decision';
import type { TripPoints } from '../rollout/trip';
import type { Channel, ReleaseState, ResumeState } from '../../schemas/words';
import type { SignatureAlgorithm } from '../../schemas/manifest';

export type OfferableRelease = ReleaseTargeting &
  TripPoints & {
    modelId: string;
    resumeState: ResumeState | null;
    imageSha256: string;
    imageSize: number;
    manifest: Buffer;
    signature: Buffer;
    keyId: string;
    algorithm: SignatureAlgorithm;
    /** Every signature the release gathered, the first (signature, keyId) first. */
    signatures: { key_id: string; algorithm: SignatureAlgorithm; signature: string }[];
  };

type Row = Omit<OfferableRelease, 'share' | 'imageSize' | 'pilotSiteIds' | 'boards' | 'keyId' | 'signatures'> & {
  /** [key id, algorithm, base64 signature] per signature. */
  signatures: [string, SignatureAlgorithm, string][] | null;
  share: number | string;
  imageSize: number | string;
  pilotSiteIds: string[] | null;
  boards: string[];
  keyId: string;
};

const DRAFT: ReleaseState = 'draft';

/**
 * Every release of the model that left draft (one indexed read), with its version and upgrade-from range
 * parsed once here (`parsed`), so a decision on them parses only the logger's running version.
 */
export async function loadReleasesOfModel(sequelize: Sequelize, modelId: string): Promise<OfferableRelease[]> {
  const rows = await sequelize.query<Row>(
    `SELECT r.id, r.model_id AS "modelId", r.version, r.channel, r.state, r.share, r.resume_state AS "resumeState", r.boards,
            r.upgrade_from AS "upgradeFrom", r.security_counter AS "securityCounter", r.daylight_window AS "daylightWindow",
            r.image_sha256 AS "imageSha256", i.size AS "imageSize", r.manifest, r.signature, k.key_id AS "keyId", k.algorithm,
            r.trip_failure_ratio AS "tripFailureRatio", r.trip_min_reports AS "tripMinReports", r.trip_reset_factor AS "tripResetFactor",
            (SELECT array_agg(ps.site_id::text ORDER BY ps.site_id) FROM release_pilot_sites ps WHERE ps.release_id = r.id) AS "pilotSiteIds",
            r.expires_at AS "expiresAt",
            -- base64 without the line breaks PostgreSQL's encode() puts every 76 characters
            (SELECT json_agg(json_build_array(sk.key_id, sk.algorithm, translate(encode(rs.signature, 'base64'), E'\n', ''))
                             ORDER BY rs.seq)
               FROM release_signatures rs JOIN signing_keys sk ON sk.id = rs.signing_key_id WHERE rs.release_id = r.id) AS signatures
       FROM releases r JOIN images i ON i.sha256 = r.image_sha256 JOIN signing_keys k ON k.id = r.signing_key_id
      WHERE r.model_id = :modelId AND r.state <> :draft`,
    { type: QueryTypes.SELECT, replacements: { modelId, draft: DRAFT } },
  );
  return rows.map((r) => ({
    ...r,
    parsed: parseTargeting(r),
    channel: r.channel as Channel,
    state: r.state as ReleaseState,
    share: Number(r.share),
    imageSize: Number(r.imageSize),
    tripFailureRatio: Number(r.tripFailureRatio),
    tripMinReports: Number(r.tripMinReports),
    tripResetFactor: Number(r.tripResetFactor),
    keyId: r.keyId.trim(),
    imageSha256: r.imageSha256.trim(),
    pilotSiteIds: r.pilotSiteIds ?? [],
    expiresAt: r.expiresAt ? new Date(r.expiresAt) : null,
    signatures: (r.signatures ?? []).map(([keyId, algorithm, signature]) => ({ key_id: keyId.trim(), algorithm, signature })),
  }));
}
