import { z } from 'zod';
import { text, uuid } from './common';

export const roles = ['admin', 'release_engineer', 'integrator', 'support'] as const;
export const roleSchema = z.enum(roles);
export type Role = z.infer<typeof roleSchema>;

export const roleNames: Record<Role, string> = {
  admin: 'Admin',
  release_engineer: 'Release engineer',
  integrator: 'Integrator',
  support: 'Support',
};

/** The roles that can ship firmware or signing keys: a second factor is required for them in production. */
export const SECOND_FACTOR_ROLES = ['admin', 'release_engineer'] as const satisfies readonly Role[];
export const needsSecondFactor = (role: Role) => (SECOND_FACTOR_ROLES as readonly Role[]).includes(role);

/** Length in UTF-8 bytes (RFC 3629), counted by code point so it needs no TextEncoder. */
export function utf8Bytes(s: string): number {
  let n = 0;
  for (const ch of s) {
    const c = ch.codePointAt(0)!;
    n += c < 0x80 ? 1 : c < 0x800 ? 2 : c < 0x10000 ? 3 : 4;
  }
  return n;
}

/**
 * OWASP ASVS 4.0 §2.1: at least 12 characters (2.1.1), long passphrases allowed (2.1.2; bcrypt reads at
 * most 72 bytes, so that is the upper limit), any character including spaces and emoji (2.1.4), and no
 * composition rules (2.1.9). Counted in UTF-8 bytes. The server also refuses common passwords (2.1.7).
 */
export const passwordSchema = z
  .string()
  .refine((s) => utf8Bytes(s) >= 12, 'must be at least 12 bytes long')
  .refine((s) => utf8Bytes(s) <= 72, 'must be at most 72 bytes long (UTF-8)');

export const emailSchema = z.string().trim().toLowerCase().max(254).email('must be an e-mail address');

/** A person's name as the console shows it. */
export const personNameSchema = text(80);

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

/** A person as other screens list them (GET /api/users; e.g. integrators to assign to a site). */
export const personSchema = z.object({ id: uuid, email: z.string(), name: z.string(), role: roleSchema });
export type Person = z.infer<typeof personSchema>;

/** The signed-in person's second factor, as the console needs it to ask, invite or insist. */
export const secondFactorStateSchema = z.object({
  on: z.boolean(),
  /** Required for this person (production, and a role that can ship firmware or keys). */
  required: z.boolean(),
  /** Required but not set up yet: nothing but setting it up is allowed. */
  setupNeeded: z.boolean(),
  /** Not required here (the demo) but the role can ship firmware: the console invites them to set it up. */
  suggested: z.boolean(),
});
export type SecondFactorState = z.infer<typeof secondFactorStateSchema>;

/** The signed-in person, with what they may start in the console and their second factor. */
export const meSchema = personSchema.extend({ can: consoleCanSchema, secondFactor: secondFactorStateSchema });
export type Me = z.infer<typeof meSchema>;

/** After the password: either signed in, or a second-factor code is still needed. */
export const signInResponse = z.discriminatedUnion('step', [
  z.object({ step: z.literal('signed_in'), user: meSchema }),
  z.object({ step: z.literal('second_factor') }),
]);
export type SignInResponse = z.infer<typeof signInResponse>;

/** Six digits from the authenticator app (spaces allowed), or one recovery code. */
export const totpCodeSchema = z.string().trim().transform((s) => s.replace(/\s+/g, '')).pipe(z.string().regex(/^\d{6}$/, 'must be the 6 digits your app shows'));
export const recoveryCodeSchema = z.string().trim().toLowerCase().transform((s) => s.replace(/[\s-]+/g, '')).pipe(z.string().regex(/^[a-z2-7]{16}$/, 'must be a recovery code as it was shown (16 letters and digits)'));

/** Either the code the app shows now, or one recovery code. */
export const secondFactorSignInRequest = z
  .object({ code: totpCodeSchema.optional(), recoveryCode: recoveryCodeSchema.optional() })
  .strict()
  .refine((v) => (v.code === undefined) !== (v.recoveryCode === undefined), { message: 'enter the code from your app, or one recovery code', path: ['code'] });
export type SecondFactorSignInRequest = z.input<typeof secondFactorSignInRequest>;

export const accountUpdateRequest = z.object({ name: personNameSchema }).strict();
export type AccountUpdateRequest = z.infer<typeof accountUpdateRequest>;

export const passwordChangeRequest = z.object({ currentPassword: z.string().min(1, 'is required').max(1024), newPassword: passwordSchema }).strict();
export type PasswordChangeRequest = z.infer<typeof passwordChangeRequest>;

export const passwordResetRequest = z.object({ email: emailSchema }).strict();
export type PasswordResetRequest = z.infer<typeof passwordResetRequest>;

/** One-time link tokens as they arrive from a mailed link: 43 base64url characters after the prefix. */
export const linkTokenSchema = z.string().trim().regex(/^h(iv|pr)_[A-Za-z0-9_-]{43}$/, 'is not a link Heliodor sent');

export const passwordResetConfirmRequest = z.object({ token: linkTokenSchema, password: passwordSchema }).strict();
export type PasswordResetConfirmRequest = z.infer<typeof passwordResetConfirmRequest>;

/** The same answer whether or not the address belongs to someone (no account discovery). */
export const passwordResetAnswer = z.object({ detail: z.string() });

export const secondFactorSetup = z.object({
  /** Base32 (RFC 4648), for typing into an app by hand. */
  secret: z.string(),
  /** otpauth:// URI the QR code carries. */
  uri: z.string(),
});
export type SecondFactorSetup = z.infer<typeof secondFactorSetup>;

export const secondFactorConfirmRequest = z.object({ code: totpCodeSchema }).strict();
export type SecondFactorConfirmRequest = z.input<typeof secondFactorConfirmRequest>;

/** Shown once, right after the second factor is turned on; Heliodor keeps only their digests. */
export const recoveryCodesAnswer = z.object({ recoveryCodes: z.array(z.string()).length(10), user: meSchema });
export type RecoveryCodesAnswer = z.infer<typeof recoveryCodesAnswer>;

export const secondFactorOffRequest = z.object({ password: z.string().min(1, 'is required').max(1024) }).strict();
export type SecondFactorOffRequest = z.infer<typeof secondFactorOffRequest>;
