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

/**
 * What a person may start in the console, apart from any one resource (server/auth/policies.ts): the
 * controls that create things and the activity log. Answers about a resource carry their own `can`.
 */
export const CONSOLE_VERBS = [
  'createRelease',
  'registerLoggers',
  'enrollLoggers',
  'createSite',
  'assignIntegrators',
  'createModel',
  'registerKey',
  'createToken',
  'readActivity',
] as const;
export type ConsoleVerb = (typeof CONSOLE_VERBS)[number];
export const consoleCanSchema = z.record(z.enum(CONSOLE_VERBS), z.boolean());
export type ConsoleCan = z.infer<typeof consoleCanSchema>;

/** A person on the team (GET /api/users). */
export const personSchema = z.object({ id: uuid, email: z.string(), name: z.string(), role: roleSchema });
export type Person = z.infer<typeof personSchema>;

/** The signed-in person, with what they may start in the console. */
export const meSchema = personSchema.extend({ can: consoleCanSchema });
export type Me = z.infer<typeof meSchema>;

export const signInResponse = z.object({ user: meSchema });
export type SignInResponse = z.infer<typeof signInResponse>;
