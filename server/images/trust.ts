// Release trust beyond one key: the threshold rule and the trust-set acceptance rule. Pure (no file,
// network or database I/O; the clock is an argument) and shared by the console, the `heliodor` CLI and
// the reference client (scripts/simulator/logger.ts), so the server and a logger judge alike.
//
// The threshold rule. A manifest or a trust set is trusted when valid signatures over its exact bytes
// come from at least `threshold` DISTINCT keys of a set of trusted keys. A second signature by the same
// key counts once (docs/SOURCES.md §6: TUF counts a threshold in distinct key ids),
// and a signature by a key outside the set counts for nothing.
//
// The trust set. Each model has a numbered trust set: the keys a logger of that model trusts, how many
// of them must sign, and until when the set is meant to be used. A logger keeps the set it has and
// moves one version at a time: it accepts version N + 1 only when the threshold of its CURRENT set
// (version N) signed the RFC 8785 canonical form of the new set without its signatures. So a key the
// logger no longer trusts can never bring in a set on its own (docs/SOURCES.md §6, how TUF rotates its root keys).
import { createPublicKey } from 'node:crypto';
import { z } from 'zod';
import { signatureAlgorithmSchema, type SignatureAlgorithm } from '../../schemas/manifest';
import { canonicalJson, decodeSignature, keyIdOf, ManifestError, parsePublicKeyPem, verifyManifestSignature, type SigningPublicKey } from './manifest';

// ─── Signatures on the wire ─────────────────────────────────────────────────

/** One signature as the offer and the trust set carry it (DEVICE_API.md, snake_case). */
export const wireSignatureSchema = z.object({
  key_id: z.string().regex(/^[0-9a-f]{16}$/, 'must be a key id: 16 lowercase hex characters'),
  algorithm: signatureAlgorithmSchema,
  signature: z.string().min(1, 'is required'),
});
export type WireSignature = z.infer<typeof wireSignatureSchema>;

// ─── The threshold rule ─────────────────────────────────────────────────────

export type ThresholdVerdict = {
  /** True when `signedBy` has at least `threshold` key ids. */
  met: boolean;
  threshold: number;
  /** Distinct trusted key ids whose signature verified, in the order first seen. */
  signedBy: string[];
  /** Trusted key ids that have not (validly) signed, in the key set's order. */
  missing: string[];
  /** Signatures that did not count, with why (unknown key, wrong algorithm, does not verify, unreadable). */
  rejected: { keyId: string; why: string }[];
};

/**
 * The threshold rule: do valid signatures over exactly `bytes` come from at least `threshold`
 * distinct keys of `keys`? A duplicate signature by one key counts once; a key outside `keys` counts
 * for nothing; a threshold below 1 is never met (nothing is trusted without a signature).
 */
export function judgeThreshold(bytes: Buffer | Uint8Array, signatures: readonly WireSignature[], keys: readonly SigningPublicKey[], threshold: number): ThresholdVerdict {
  const byId = new Map(keys.map((k) => [k.keyId, k]));
  const signedBy: string[] = [];
  const rejected: ThresholdVerdict['rejected'] = [];
  for (const s of signatures) {
    const key = byId.get(s.key_id);
    if (!key) {
      rejected.push({ keyId: s.key_id, why: 'not a trusted key' });
      continue;
    }
    if (signedBy.includes(key.keyId)) continue; // counts once
    if (key.algorithm !== s.algorithm) {
      rejected.push({ keyId: s.key_id, why: `the key signs with ${key.algorithm}, the signature says ${s.algorithm}` });
      continue;
    }
    let valid = false;
    try {
      valid = verifyManifestSignature(bytes, s.signature, key);
    } catch (error) {
      rejected.push({ keyId: s.key_id, why: error instanceof ManifestError ? error.message : 'the signature cannot be read' });
      continue;
    }
    if (valid) signedBy.push(key.keyId);
    else rejected.push({ keyId: s.key_id, why: 'the signature does not verify' });
  }
  const met = Number.isInteger(threshold) && threshold >= 1 && signedBy.length >= threshold;
  return { met, threshold, signedBy, missing: keys.map((k) => k.keyId).filter((id) => !signedBy.includes(id)), rejected };
}

// ─── The trust set ──────────────────────────────────────────────────────────

/** The largest threshold a model may ask for (and the most keys a trust set lists). */
export const MAX_SIGNING_THRESHOLD = 16;

export const trustKeySchema = z.object({
  key_id: z.string().regex(/^[0-9a-f]{16}$/),
  algorithm: signatureAlgorithmSchema,
  /** Standard base64 of the key's DER SubjectPublicKeyInfo. */
  public_key: z.string().min(1),
});
export type TrustKey = z.infer<typeof trustKeySchema>;

/** What is signed: the set without its signatures (its RFC 8785 canonical bytes). */
export const trustSetBodySchema = z.object({
  model: z.string(),
  version: z.number().int().min(1),
  threshold: z.number().int().min(1).max(MAX_SIGNING_THRESHOLD),
  keys: z.array(trustKeySchema).min(1).max(MAX_SIGNING_THRESHOLD),
  expires: z.iso.datetime(),
});
export type TrustSetBody = z.infer<typeof trustSetBodySchema>;

export const signedTrustSetSchema = trustSetBodySchema.extend({ signatures: z.array(wireSignatureSchema).max(64) });
export type SignedTrustSet = z.infer<typeof signedTrustSetSchema>;

/** The trust-set entry of a registered key. */
export function trustKeyOf(key: SigningPublicKey): TrustKey {
  return { key_id: key.keyId, algorithm: key.algorithm, public_key: key.spkiDer.toString('base64') };
}

/** The body of a set, keys sorted by key id, as canonical bytes: what the previous set's keys sign. */
export function trustSetBytes(body: TrustSetBody): Buffer {
  const { model, version, threshold, keys, expires } = body;
  const sorted = [...keys].map(({ key_id, algorithm, public_key }) => ({ key_id, algorithm, public_key })).sort((a, b) => (a.key_id < b.key_id ? -1 : a.key_id > b.key_id ? 1 : 0));
  return Buffer.from(canonicalJson({ expires, keys: sorted, model, threshold, version }), 'utf8');
}

export type TrustSetProblem =
  | 'malformed'
  | 'other_model'
  | 'not_next_version'
  | 'bad_key'
  | 'threshold_above_keys'
  | 'not_signed_by_current';

export type TrustSetVerdict =
  | { ok: true; set: TrustSetBody; signedBy: string[] }
  | { ok: false; problem: TrustSetProblem; detail: string };

/** The keys of a set as verifiable public keys; throws ManifestError when one does not read or its id is wrong. */
export function keysOfTrustSet(set: Pick<TrustSetBody, 'keys'>): SigningPublicKey[] {
  return set.keys.map((k) => {
    let der: Buffer;
    try {
      der = Buffer.from(k.public_key, 'base64');
      const pem = String(createPublicKey({ key: der, format: 'der', type: 'spki' }).export({ type: 'spki', format: 'pem' }));
      const parsed = parsePublicKeyPem(pem);
      if (parsed.keyId !== k.key_id) throw new ManifestError('publicKeyPem', 'not_a_public_key', `key ${k.key_id}: its public key has key id ${keyIdOf(der)}`);
      if (parsed.algorithm !== k.algorithm) throw new ManifestError('publicKeyPem', 'unsupported_key', `key ${k.key_id}: its public key is ${parsed.algorithm}, the set says ${k.algorithm}`);
      return parsed;
    } catch (error) {
      if (error instanceof ManifestError) throw error;
      throw new ManifestError('publicKeyPem', 'not_a_public_key', `key ${k.key_id}: the public key cannot be read`);
    }
  });
}

/**
 * The trust-set acceptance rule, as a logger applies it. `current` is the set the logger keeps;
 * `candidate` the set a check-in brought. Accepted only when all hold:
 * - it is well formed, for the same model, and exactly the next version (one step at a time);
 * - each of its keys reads and carries its own key id, no key twice, and its threshold is at most its keys;
 * - signatures from at least `current.threshold` distinct keys of `current` verify over its canonical
 *   bytes without the signatures.
 * Expiry is not judged here: a logger that slept through several sets steps through sets that have
 * since run out, as the newest set is what counts (the caller judges that one's `expires`).
 */
export function acceptTrustSet(current: TrustSetBody, candidate: unknown): TrustSetVerdict {
  const parsed = signedTrustSetSchema.safeParse(candidate);
  if (!parsed.success) {
    return { ok: false, problem: 'malformed', detail: `the trust set is not well formed: ${parsed.error.issues.map((i) => `${i.path.join('.') || 'set'} ${i.message}`).join('; ')}` };
  }
  const next = parsed.data;
  if (next.model !== current.model) return { ok: false, problem: 'other_model', detail: `the trust set is for model ${next.model}, not ${current.model}` };
  if (next.version !== current.version + 1) {
    return { ok: false, problem: 'not_next_version', detail: `the trust set is version ${next.version}; only version ${current.version + 1} follows ${current.version}` };
  }
  const ids = next.keys.map((k) => k.key_id);
  if (new Set(ids).size !== ids.length) return { ok: false, problem: 'bad_key', detail: 'the trust set lists a key twice' };
  try {
    keysOfTrustSet(next);
  } catch (error) {
    return { ok: false, problem: 'bad_key', detail: (error as Error).message };
  }
  if (next.threshold > next.keys.length) {
    return { ok: false, problem: 'threshold_above_keys', detail: `the trust set asks for ${next.threshold} signatures but lists ${next.keys.length} keys` };
  }
  const body: TrustSetBody = { model: next.model, version: next.version, threshold: next.threshold, keys: next.keys, expires: next.expires };
  const verdict = judgeThreshold(trustSetBytes(body), next.signatures, keysOfTrustSet(current), current.threshold);
  if (!verdict.met) {
    return {
      ok: false,
      problem: 'not_signed_by_current',
      detail: `version ${next.version} is signed by ${verdict.signedBy.length} of the ${current.threshold} keys of version ${current.version} it needs`,
    };
  }
  return { ok: true, set: body, signedBy: verdict.signedBy };
}

/** Whether a time (RFC 3339) has passed at `now`. */
export function hasExpired(expires: string | Date | null | undefined, now: Date): boolean {
  if (expires === null || expires === undefined) return false;
  const at = expires instanceof Date ? expires.getTime() : Date.parse(expires);
  return Number.isFinite(at) && at <= now.getTime();
}

/** Decodes a wire signature's base64 for storage (64 bytes); throws ManifestError naming what is wrong. */
export function signatureBytes(signature: WireSignature | { signature: string; algorithm: SignatureAlgorithm }): Buffer {
  return decodeSignature(signature.signature, signature.algorithm);
}
