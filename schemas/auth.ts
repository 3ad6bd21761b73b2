import { z } from 'zod';
import { uuid } from './common';

export const roles = ['admin', 'release_engineer', 'integrator', 'support'] as const;
export const roleSchema = z.enum(roles);
export type Role = z.infer<typeof roleSchema>;

export const roleNames: Record<Role, string> = {
  admin: 'Admin',
  release_engineer: 'Release engineer',
  integrator: 'Integrator',
  support: 'Support',
};

const utf8Bytes = (s: string) => new TextEncoder().encode(s).length;

/** OWASP: bcrypt takes at most 72 bytes; we ask for at least 12. Counted in UTF-8 bytes. */
export const passwordSchema = z
  .string()
  .refine((s) => utf8Bytes(s) >= 12, 'must be at least 12 bytes long')
  .refine((s) => utf8Bytes(s) <= 72, 'must be at most 72 bytes long (UTF-8)');

export const emailSchema = z.string().trim().toLowerCase().max(254).email('must be an e-mail address');

export const signInRequest = z.object({
  email: emailSchema,
  // Any length is accepted here so that a too-short password reads as "wrong password", not a hint.
  password: z.string().min(1, 'is required').max(1024),
});
export type SignInRequest = z.infer<typeof signInRequest>;

export const meSchema = z.object({ id: uuid, email: z.string(), name: z.string(), role: roleSchema });
export type Me = z.infer<typeof meSchema>;

export const signInResponse = z.object({ user: meSchema });
export type SignInResponse = z.infer<typeof signInResponse>;
