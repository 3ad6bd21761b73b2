// The team: people, their roles and status, invitations (GET /api/team and friends; admin only),
// and the invitation link an invitee opens.
import { z } from 'zod';
import { listOf, uuid } from './common';
import { emailSchema, linkTokenSchema, meSchema, passwordSchema, personNameSchema, roleSchema } from './auth';

export const PERSON_STATUSES = ['invited', 'active', 'disabled'] as const;
export const personStatusSchema = z.enum(PERSON_STATUSES);
export type PersonStatus = z.infer<typeof personStatusSchema>;

export const teamMemberSchema = z.object({
  id: uuid,
  name: z.string(),
  email: z.string(),
  role: roleSchema,
  status: personStatusSchema,
  lastSignInAt: z.string().nullable(),
  secondFactor: z.boolean(),
  /** For invited people: when the current link stops working. */
  invitationExpiresAt: z.string().nullable(),
  invitedBy: z.object({ id: uuid, name: z.string() }).nullable(),
  joinedAt: z.string().nullable(),
});
export type TeamMember = z.infer<typeof teamMemberSchema>;

export const teamList = listOf(teamMemberSchema);
export type TeamList = z.infer<typeof teamList>;

export const invitationRequest = z.object({ email: emailSchema, role: roleSchema }).strict();
export type InvitationRequest = z.infer<typeof invitationRequest>;

/** One change at a time: a new role, or disabling / enabling. */
export const teamMemberPatch = z
  .object({ role: roleSchema.optional(), disabled: z.boolean().optional() })
  .strict()
  .refine((v) => (v.role === undefined) !== (v.disabled === undefined), { message: 'send either a new role or disabled: true / false', path: ['role'] });
export type TeamMemberPatch = z.infer<typeof teamMemberPatch>;

export const invitationLookupRequest = z.object({ token: linkTokenSchema }).strict();

/** What the invitee sees before joining. */
export const invitationView = z.object({ email: z.string(), role: roleSchema, invitedBy: z.string().nullable(), expiresAt: z.string() });
export type InvitationView = z.infer<typeof invitationView>;

export const invitationAcceptRequest = z.object({ token: linkTokenSchema, name: personNameSchema, password: passwordSchema }).strict();
export type InvitationAcceptRequest = z.infer<typeof invitationAcceptRequest>;

export const invitationAccepted = z.object({ user: meSchema });
