// Signing keys: the console holds public keys only.
import { z } from 'zod';
import { text } from './common';
import type { SignatureAlgorithm } from './manifest';

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
