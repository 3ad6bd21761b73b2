// Signing keys: the console holds public keys only.
import { z } from 'zod';
import { text } from './common';
import { signatureAlgorithmSchema, type SignatureAlgorithm } from './manifest';

export const keyStates = ['active', 'retired', 'revoked'] as const;
export type KeyState = (typeof keyStates)[number];

export const registerKeyRequest = z.strictObject({
  name: text(80),
  // Parsed by server/images/manifest.ts parsePublicKeyPem, which names what is wrong with it.
  publicKeyPem: z.string({ error: 'is required: paste the public key (-----BEGIN PUBLIC KEY-----)' }).max(8192, 'at most 8192 characters'),
});
export type RegisterKeyRequest = z.infer<typeof registerKeyRequest>;

/** What a person may do with a signing key (its answers' `can`, from server/auth/policies.ts). */
export const KEY_VERBS = ['retire', 'revoke'] as const;
export type KeyVerb = (typeof KEY_VERBS)[number];
export type KeyCan = Record<KeyVerb, boolean>;

export type SigningKeyView = {
  id: string;
  name: string;
  keyId: string;
  algorithm: SignatureAlgorithm;
  state: KeyState;
  publicKeyPem: string;
  createdAt: string;
  retiredAt: string | null;
  revokedAt: string | null;
  releaseCount: number;
  can: KeyCan;
};

// ─── Trust sets (a model's keys and threshold as loggers follow them) ───────

export const keyIdSchema = z.string({ error: 'must be a key id' }).regex(/^[0-9a-f]{16}$/, 'must be a key id: 16 lowercase hex characters');

/** One signature sent to the console (a release's manifest, or a trust set), standard base64. */
export const signatureRequest = z.strictObject({
  keyId: keyIdSchema,
  algorithm: signatureAlgorithmSchema,
  signature: z.string({ error: 'must be the base64 signature' }).min(1, 'is required').max(200, 'at most 200 characters'),
});
export type SignatureRequest = z.infer<typeof signatureRequest>;

export const trustSignatureRequest = signatureRequest.extend({
  version: z.number({ error: 'must be the pending version' }).int('must be a whole number').min(2, 'version 1 needs no signatures'),
});
export type TrustSignatureRequest = z.infer<typeof trustSignatureRequest>;

type KeyName = { keyId: string; name: string };

/** One version of a model's trust set, as the console shows it. */
export type TrustSetVersionView = {
  version: number;
  threshold: number;
  keys: (KeyName & { algorithm: SignatureAlgorithm })[];
  expires: string;
  createdAt: string;
  /** Null while pending (not served to loggers). */
  signedAt: string | null;
  /** Keys of the previous version whose signature over this one verifies. */
  signedBy: KeyName[];
  /** How many of them it needs: the previous version's threshold (0 for version 1). */
  needs: number;
  /** Keys of the previous version that have not signed. */
  missing: KeyName[];
  /** The RFC 8785 canonical text the previous version's keys sign. */
  canonical: string;
};

/** GET /api/models/:id/trust. */
export type TrustSetView = {
  modelId: string;
  signingThreshold: number;
  current: TrustSetVersionView | null;
  pending: TrustSetVersionView | null;
};
