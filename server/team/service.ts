// The team, as the admin forms it: invite people by e-mail (a one-time link, valid 72 hours), resend or
// revoke an invitation, change a role, disable and enable, turn off someone's second factor. An invitee
// joins by opening the link. At least one active admin always remains. Every change writes one activity
// row in its transaction, and changes of access end the person's sessions.
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { fn, col, where } from 'sequelize';
import { User, personStatus } from '../db/models';
import { Problem, problems } from '../http/problem';
import { recordActivity } from '../activity/service';
import type { RequestContext } from '../auth/actor';
import { roleNames, type Role } from '../../schemas/auth';
import type { InvitationView, TeamMember, TeamMemberPatch } from '../../schemas/team';
import { createLink, findLink, linkIsOpen, openInvitations, revokeSessionsOf, useLink, createSession } from '../auth/store';
import { checkNewPassword, clearSecondFactor, linkBase, personActor, type AccountDeps, type IssuedSession } from '../auth/service';
import { hashPassword } from '../auth/passwords';
import { sessionTtlSeconds, signSession } from '../auth/session';
import { invitationMail } from '../mail/accounts';

export const invitationTtlS = 72 * 60 * 60;

/** "an integrator", "a release engineer", "support": a role inside a sentence. */
const asRole = (role: Role) => ({ admin: 'an admin', release_engineer: 'a release engineer', integrator: 'an integrator', support: 'support' })[role];
const roleWord = (role: Role) => roleNames[role].toLowerCase();

export async function listTeam(sequelize: Sequelize, now: Date): Promise<{ rows: TeamMember[]; total: number }> {
  const [people, links] = await Promise.all([User.findAll({ order: [['name', 'ASC'], ['email', 'ASC']] }), openInvitations(sequelize, now)]);
  const names = new Map(people.map((p) => [p.id, p.name]));
  const order = { active: 0, invited: 1, disabled: 2 } as const;
  const rows = people
    .map((p): TeamMember => {
      const status = personStatus(p);
      return {
        id: p.id,
        name: p.name,
        email: p.email,
        role: p.role,
        status,
        lastSignInAt: p.lastSignInAt ? p.lastSignInAt.toISOString() : null,
        secondFactor: Boolean(p.totpEnabledAt),
        invitationExpiresAt: status === 'invited' ? (links.get(p.id)?.toISOString() ?? null) : null,
        invitedBy: p.invitedBy ? { id: p.invitedBy, name: names.get(p.invitedBy) ?? 'former member' } : null,
        joinedAt: p.joinedAt ? p.joinedAt.toISOString() : null,
      };
    })
    .sort((a, b) => order[a.status] - order[b.status]);
  return { rows, total: rows.length };
}

async function memberOf(sequelize: Sequelize, id: string): Promise<TeamMember> {
  const { rows } = await listTeam(sequelize, new Date());
  const row = rows.find((r) => r.id === id);
  if (!row) throw problems.notFound('person');
  return row;
}

async function lockPerson(id: string, t: Transaction): Promise<User> {
  const user = await User.findByPk(id, { transaction: t, lock: t.LOCK.UPDATE });
  if (!user) throw problems.notFound('person', 'No one on the team has that id.');
  return user;
}

async function sendInvitation(deps: AccountDeps, to: string, token: string, role: Role, invitedBy: string, expiresAt: Date, origin: string): Promise<boolean> {
  const link = `${linkBase(deps.config, origin)}/invitation#t=${token}`;
  try {
    await deps.mailer.send({ to: [to], ...invitationMail({ link, role, invitedBy, expiresAt }) });
    return true;
  } catch (err) {
    deps.logger.error({ err: { message: (err as Error).message } }, 'invitation e-mail not sent');
    return false;
  }
}

/** An invitation: the person is on the team as "invited" until they open the link; the address must be new. */
export async function invite(deps: AccountDeps, ctx: RequestContext, input: { email: string; role: Role }, origin: string) {
  linkBase(deps.config, origin);
  const now = deps.now();
  const { user, token, expiresAt } = await deps.sequelize.transaction(async (t) => {
    const existing = await User.findOne({ where: where(fn('lower', col('email')), input.email.toLowerCase()), transaction: t });
    if (existing) {
      const status = personStatus(existing);
      throw problems.conflict(
        status === 'invited'
          ? `${input.email} is already invited. Resend the invitation from the team list instead.`
          : `${input.email} is already on the team (${status}${status === 'disabled' ? '; enable them instead' : ''}).`,
        { personId: existing.id, status },
      );
    }
    const created = await User.create(
      {
        email: input.email,
        name: input.email.split('@')[0],
        role: input.role,
        passwordHash: null,
        joinedAt: null,
        invitedBy: ctx.actor.type === 'person' ? ctx.actor.id : null,
      },
      { transaction: t },
    );
    const link = await createLink(deps.sequelize, t, { userId: created.id, purpose: 'invitation', createdBy: created.invitedBy, now, ttlS: invitationTtlS });
    await recordActivity(t, ctx, {
      action: 'person.invited',
      targetType: 'user',
      targetId: created.id,
      summary: `${ctx.actor.name} invited ${input.email} to join as ${asRole(input.role)}`,
      details: { email: input.email, role: input.role, expiresAt: link.expiresAt.toISOString() },
    });
    return { user: created, ...link };
  });
  const mailed = await sendInvitation(deps, user.email, token, user.role, ctx.actor.name, expiresAt, origin);
  return { member: await memberOf(deps.sequelize, user.id), mailed };
}

/** A fresh link for someone who has not joined yet; the earlier link stops working. */
export async function resendInvitation(deps: AccountDeps, ctx: RequestContext, id: string, origin: string) {
  linkBase(deps.config, origin);
  const now = deps.now();
  const { user, token, expiresAt } = await deps.sequelize.transaction(async (t) => {
    const person = await lockPerson(id, t);
    if (personStatus(person) !== 'invited') throw problems.conflict(`${person.name} has already joined; there is no invitation to resend.`);
    const link = await createLink(deps.sequelize, t, { userId: person.id, purpose: 'invitation', createdBy: ctx.actor.type === 'person' ? ctx.actor.id : null, now, ttlS: invitationTtlS });
    await recordActivity(t, ctx, {
      action: 'person.invitation_resent',
      targetType: 'user',
      targetId: person.id,
      summary: `${ctx.actor.name} sent ${person.email} a new invitation link; the earlier one no longer works`,
      details: { expiresAt: link.expiresAt.toISOString() },
    });
    return { user: person, ...link };
  });
  const mailed = await sendInvitation(deps, user.email, token, user.role, ctx.actor.name, expiresAt, origin);
  return { member: await memberOf(deps.sequelize, user.id), mailed };
}

/** Withdraws an invitation: the invited person leaves the team list and their link stops working. */
export async function revokeInvitation(deps: AccountDeps, ctx: RequestContext, id: string) {
  await deps.sequelize.transaction(async (t) => {
    const person = await lockPerson(id, t);
    if (personStatus(person) !== 'invited') throw problems.conflict(`${person.name} has already joined; disable them instead of revoking an invitation.`);
    await recordActivity(t, ctx, {
      action: 'person.invitation_revoked',
      targetType: 'user',
      targetId: person.id,
      summary: `${ctx.actor.name} revoked the invitation of ${person.email}`,
      details: { email: person.email, role: person.role },
    });
    // Nobody has acted as an invited person, so nothing else names them; their links and site assignments go with them.
    await person.destroy({ transaction: t });
  });
}

/** The rule that keeps the console governable: at least one admin who has joined and is not disabled. */
async function keepAnAdmin(sequelize: Sequelize, person: User, t: Transaction, change: string) {
  if (person.role !== 'admin' || personStatus(person) !== 'active') return;
  const admins = await sequelize.query<{ id: string }>(
    `SELECT id FROM users WHERE role = 'admin' AND disabled_at IS NULL AND joined_at IS NOT NULL FOR UPDATE`,
    { type: QueryTypes.SELECT, transaction: t },
  );
  if (admins.filter((a) => a.id !== person.id).length === 0) {
    throw new Problem(409, 'last-admin', 'The team needs an admin', `${change} would leave the team without an active admin. Make someone else an admin first.`, {
      extensions: { rule: 'at-least-one-active-admin' },
    });
  }
}

/** A new role, or disabling / enabling. Either way the person's sessions end at their next request. */
export async function changeMember(deps: AccountDeps, ctx: RequestContext, id: string, patch: TeamMemberPatch) {
  await deps.sequelize.transaction(async (t) => {
    const person = await lockPerson(id, t);
    const now = deps.now();
    if (patch.role !== undefined) {
      if (person.role === patch.role) return;
      await keepAnAdmin(deps.sequelize, person, t, `Changing ${person.name}'s role`);
      const before = person.role;
      person.role = patch.role;
      await person.save({ transaction: t });
      const ended = await revokeSessionsOf(deps.sequelize, person.id, now, t);
      await recordActivity(t, ctx, {
        action: 'person.role_changed',
        targetType: 'user',
        targetId: person.id,
        summary: `${ctx.actor.name} changed ${person.name}'s role from ${roleWord(before)} to ${roleWord(patch.role)}${ended ? '; they were signed out' : ''}`,
        details: { from: before, to: patch.role, sessionsEnded: ended },
      });
      return;
    }
    if (patch.disabled === true) {
      if (person.disabledAt) return;
      if (personStatus(person) === 'invited') throw problems.conflict(`${person.email} has not joined yet: revoke the invitation instead.`);
      await keepAnAdmin(deps.sequelize, person, t, `Disabling ${person.name}`);
      person.disabledAt = now;
      await person.save({ transaction: t });
      const ended = await revokeSessionsOf(deps.sequelize, person.id, now, t);
      await recordActivity(t, ctx, {
        action: 'person.disabled',
        targetType: 'user',
        targetId: person.id,
        summary: `${ctx.actor.name} disabled ${person.name}: they can no longer sign in${ended ? ' and were signed out' : ''}`,
        details: { sessionsEnded: ended },
      });
      return;
    }
    if (!person.disabledAt) return;
    person.disabledAt = null;
    await person.save({ transaction: t });
    await recordActivity(t, ctx, {
      action: 'person.enabled',
      targetType: 'user',
      targetId: person.id,
      summary: `${ctx.actor.name} enabled ${person.name} again as ${asRole(person.role)}`,
    });
  });
  return memberOf(deps.sequelize, id);
}

/** For someone who lost their phone and their recovery codes: their second factor goes and their sessions end. */
export async function resetMemberSecondFactor(deps: AccountDeps, ctx: RequestContext, id: string) {
  await deps.sequelize.transaction(async (t) => {
    const person = await lockPerson(id, t);
    if (!person.totpEnabledAt) throw problems.conflict(`${person.name} has no second factor to turn off.`);
    await clearSecondFactor(deps, person, t);
    const ended = await revokeSessionsOf(deps.sequelize, person.id, deps.now(), t);
    await recordActivity(t, ctx, {
      action: 'person.second_factor_off',
      targetType: 'user',
      targetId: person.id,
      summary: `${ctx.actor.name} turned off ${person.name}'s second factor; ${person.name} was signed out and sets up a new one at the next sign-in`,
      details: { sessionsEnded: ended },
    });
  });
  return memberOf(deps.sequelize, id);
}

// ─── The invitee ────────────────────────────────────────────────────────────

const invitationNotValid = () =>
  new Problem(410, 'link-not-valid', 'This invitation no longer works', 'This invitation link has expired, was replaced by a newer one, was revoked or was already used. Ask an admin of your team for a new one.');

export async function lookUpInvitation(sequelize: Sequelize, token: string, now: Date): Promise<InvitationView> {
  const link = await findLink(sequelize, token, 'invitation');
  if (!link || !linkIsOpen(link, now)) throw invitationNotValid();
  const person = await User.findByPk(link.userId);
  if (!person || personStatus(person) !== 'invited') throw invitationNotValid();
  const by = link.createdBy ? await User.findByPk(link.createdBy) : null;
  return { email: person.email, role: person.role, invitedBy: by?.name ?? null, expiresAt: link.expiresAt.toISOString() };
}

/** The invitee chooses their name and password, joins, and is signed in. The link is used up. */
export async function acceptInvitation(deps: AccountDeps, input: { token: string; name: string; password: string }, requestId: string | null) {
  await lookUpInvitation(deps.sequelize, input.token, deps.now());
  checkNewPassword(input.password, 'password');
  const hash = await hashPassword(input.password, deps.passwordCost);
  return deps.sequelize.transaction(async (t): Promise<{ user: User; session: IssuedSession }> => {
    const now = deps.now();
    const link = await findLink(deps.sequelize, input.token, 'invitation', t);
    if (!link || !linkIsOpen(link, now)) throw invitationNotValid();
    const person = await lockPerson(link.userId, t);
    if (personStatus(person) !== 'invited') throw invitationNotValid();
    person.name = input.name;
    person.passwordHash = hash;
    person.joinedAt = now;
    person.lastSignInAt = now;
    await person.save({ transaction: t });
    await useLink(deps.sequelize, link.id, now, t);
    const inviter = person.invitedBy ? await User.findByPk(person.invitedBy, { transaction: t }) : null;
    await recordActivity(t, { actor: personActor(person), requestId }, {
      action: 'person.joined',
      targetType: 'user',
      targetId: person.id,
      summary: `${person.name} (${person.email}) joined the team as ${asRole(person.role)}${inviter ? `, invited by ${inviter.name}` : ''}`,
      details: { role: person.role },
    });
    const session = await createSession(deps.sequelize, person.id, 'full', now, sessionTtlSeconds, t);
    return { user: person, session: { token: signSession(deps.config.jwtSecret, person.id, session.id, session.expiresAt), ttlS: sessionTtlSeconds, stage: 'full' } };
  });
}
