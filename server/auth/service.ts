// Accounts: signing in (a password, then a second-factor code when it is on), signing out, one's own
// name, password and second factor, and password resets. Every change of access ends the sessions it
// should and writes one activity row in its transaction.
import type { Sequelize, Transaction } from 'sequelize';
import { fn, col, where } from 'sequelize';
import type { Logger } from 'pino';
import { User } from '../db/models';
import { Problem, problems } from '../http/problem';
import { recordActivity } from '../activity/service';
import { needsSecondFactor, type Me, type Person, type SecondFactorSetup } from '../../schemas/auth';
import type { Actor, RequestContext } from './actor';
import { canOf, consoleResource } from './policies';
import { checkPassword, costOf, decoyHash, hashPassword } from './passwords';
import { isCommonPassword } from './common-passwords';
import { attemptOn, attemptSucceeded, countAttempt, limits } from './limits';
import { seal, unseal } from './sealed';
import { checkTotp, newTotpSecret, totpUri } from './totp';
import {
  createLink,
  createSession,
  findLink,
  linkIsOpen,
  newRecoveryCodes,
  replaceRecoveryCodes,
  revokeSession,
  revokeSessionsOf,
  useLink,
  useRecoveryCode,
  type SessionStage,
} from './store';
import { pendingSessionTtlSeconds, sessionTtlSeconds, signSession } from './session';
import type { Mailer } from '../mail/mailer';
import { passwordResetMail } from '../mail/accounts';
import type { Later } from './later';

export type AccountDeps = {
  sequelize: Sequelize;
  config: { jwtSecret: string; dataKey: string; production: boolean; publicUrl?: string };
  mailer: Mailer;
  logger: Logger;
  now: () => Date;
  later: Later;
  /** bcrypt work factor for new hashes, and for the decoy an unknown address is compared against. */
  passwordCost: number;
};

/** A session to hand to the browser as its cookie (kept for `ttlS` seconds). */
export type IssuedSession = { token: string; ttlS: number; stage: SessionStage };

export const presentPerson = (user: User): Person => ({ id: user.id, email: user.email, name: user.name, role: user.role });

export function presentMe(user: Pick<User, 'id' | 'email' | 'name' | 'role' | 'totpEnabledAt'>, production: boolean): Me {
  const on = Boolean(user.totpEnabledAt);
  const wanted = needsSecondFactor(user.role);
  return {
    id: user.id,
    email: user.email,
    name: user.name,
    role: user.role,
    can: canOf(personActor(user as User), consoleResource),
    secondFactor: { on, required: production && wanted, setupNeeded: production && wanted && !on, suggested: !production && wanted && !on },
  };
}

export const personActor = (user: User): Actor => ({ type: 'person', id: user.id, name: user.name, email: user.email, role: user.role });
const contextOf = (user: User, requestId: string | null): RequestContext => ({ actor: personActor(user), requestId });

/** Sealed second-factor secrets are bound to their person and purpose (server/auth/sealed.ts). */
const totpContext = (userId: string) => `totp:${userId}`;
const pendingContext = (userId: string) => `totp-pending:${userId}`;

const wrongCredentials = () => problems.unauthorized('The e-mail or password is not right.');
const wrongCode = () => new Problem(401, 'second-factor-refused', 'Code not accepted', 'That code is not right or was already used. Enter the code your app shows now, or a recovery code.');

function findByEmail(email: string) {
  return User.findOne({ where: where(fn('lower', col('email')), email.toLowerCase()) });
}

/** OWASP ASVS 4.0 §2.1.7: a new password must not be one of the passwords people choose most often. */
export function checkNewPassword(password: string, field: string) {
  if (isCommonPassword(password)) {
    throw problems.badRequest('Choose a less common password.', [
      { path: field, message: 'is on the list of passwords people choose most often; choose another (a few unrelated words work well)' },
    ]);
  }
}

async function issue(deps: AccountDeps, user: User, stage: SessionStage, t?: Transaction): Promise<IssuedSession> {
  const now = deps.now();
  const ttl = stage === 'full' ? sessionTtlSeconds : pendingSessionTtlSeconds;
  const session = await createSession(deps.sequelize, user.id, stage, now, ttl, t);
  return { token: signSession(deps.config.jwtSecret, user.id, session.id, session.expiresAt), ttlS: ttl, stage };
}

// ─── Signing in and out ─────────────────────────────────────────────────────

/**
 * The password step. Unknown addresses, people who have not joined and wrong passwords fail the same
 * way and do the same work: one bcrypt comparison at the same cost. Attempts count per account and per
 * address before anything is checked.
 */
export async function passwordStep(deps: AccountDeps, email: string, password: string, ip: string, requestId: string | null) {
  const account = attemptOn(limits.signInAccount, email);
  const fromIp = attemptOn(limits.signInIp, ip);
  await countAttempt(deps.sequelize, [account, fromIp], deps.now(), 'sign-in');
  const user = await findByEmail(email);
  const ok = await checkPassword(password, user?.passwordHash ?? (await decoyHash(deps.passwordCost)));
  if (!user || !user.passwordHash || !ok || user.disabledAt || !user.joinedAt) throw wrongCredentials();
  await attemptSucceeded(deps.sequelize, account, [fromIp]);
  // A hash made at a lower cost than today's is renewed while the password is at hand.
  if (costOf(user.passwordHash) < deps.passwordCost) {
    user.passwordHash = await hashPassword(password, deps.passwordCost);
    await user.save();
  }
  if (user.totpEnabledAt) return { user, session: await issue(deps, user, 'second_factor') };
  const session = await deps.sequelize.transaction(async (t) => {
    const issued = await issue(deps, user, 'full', t);
    await signedIn(user, deps.now(), requestId, t, `${user.name} signed in`);
    return issued;
  });
  return { user, session };
}

async function signedIn(user: User, now: Date, requestId: string | null, t: Transaction, summary: string) {
  user.lastSignInAt = now;
  await user.save({ transaction: t });
  await recordActivity(t, contextOf(user, requestId), { action: 'person.signed_in', targetType: 'user', targetId: user.id, summary });
}

/** The second step: a code from the authenticator app (each time step once), or an unused recovery code. */
export async function secondFactorStep(
  deps: AccountDeps,
  pending: { sessionId: string; userId: string } | undefined,
  answer: { code?: string; recoveryCode?: string },
  ip: string,
  requestId: string | null,
) {
  if (!pending) throw problems.unauthorized('Sign in with your e-mail and password first; the code step lasts five minutes.');
  const account = attemptOn(limits.secondFactorAccount, pending.userId);
  const fromIp = attemptOn(limits.secondFactorIp, ip);
  await countAttempt(deps.sequelize, [account, fromIp], deps.now(), 'second-factor');
  const result = await deps.sequelize.transaction(async (t) => {
    const user = await User.findByPk(pending.userId, { transaction: t, lock: t.LOCK.UPDATE });
    if (!user?.totpSecret) throw wrongCode();
    const now = deps.now();
    let summary = `${user.name} signed in with a second factor`;
    if (answer.code !== undefined) {
      const step = await checkTotp(unseal(deps.config.dataKey, user.totpSecret, totpContext(user.id)), answer.code, now, user.totpLastStep);
      if (step === null) throw wrongCode();
      user.totpLastStep = step;
    } else {
      const left = await useRecoveryCode(deps.sequelize, user.id, answer.recoveryCode ?? '', now, t);
      if (left === null) throw wrongCode();
      summary = `${user.name} signed in with a recovery code (${left} left)`;
      await recordActivity(t, contextOf(user, requestId), {
        action: 'person.recovery_code_used',
        targetType: 'user',
        targetId: user.id,
        summary: `${user.name} used a recovery code to sign in; ${left} of 10 remain`,
        details: { left },
      });
    }
    await revokeSession(deps.sequelize, pending.sessionId, now, t);
    const session = await issue(deps, user, 'full', t);
    await signedIn(user, now, requestId, t, summary);
    return { user, session };
  });
  await attemptSucceeded(deps.sequelize, account, [fromIp]);
  return result;
}

/** Ends this session on the server: a copy of the cookie no longer works. */
export async function signOut(deps: AccountDeps, sessionId: string | undefined, actor: Actor | undefined, requestId: string | null) {
  if (!sessionId) return;
  await deps.sequelize.transaction(async (t) => {
    await revokeSession(deps.sequelize, sessionId, deps.now(), t);
    if (actor?.type === 'person') {
      await recordActivity(t, { actor, requestId }, { action: 'person.signed_out', targetType: 'user', targetId: actor.id, summary: `${actor.name} signed out` });
    }
  });
}

/** Ends every session of the signed-in person, this one included. */
export async function signOutEverywhere(deps: AccountDeps, ctx: RequestContext) {
  const actor = ctx.actor;
  if (actor.type !== 'person') throw problems.forbidden('Only people have sessions.');
  await deps.sequelize.transaction(async (t) => {
    const ended = await revokeSessionsOf(deps.sequelize, actor.id, deps.now(), t);
    await recordActivity(t, ctx, {
      action: 'person.sessions_revoked',
      targetType: 'user',
      targetId: actor.id,
      summary: `${actor.name} signed out everywhere (${ended} ${ended === 1 ? 'session' : 'sessions'} ended)`,
      details: { ended },
    });
  });
}

// ─── One's own account ──────────────────────────────────────────────────────

async function me(ctx: RequestContext, t?: Transaction): Promise<User> {
  if (ctx.actor.type !== 'person') throw problems.forbidden('Only people have an account; tokens do not.');
  const user = await User.findByPk(ctx.actor.id, t ? { transaction: t, lock: t.LOCK.UPDATE } : {});
  if (!user) throw problems.unauthorized();
  return user;
}

export async function currentPerson(ctx: RequestContext): Promise<User> {
  return me(ctx);
}

export async function rename(deps: AccountDeps, ctx: RequestContext, name: string): Promise<User> {
  return deps.sequelize.transaction(async (t) => {
    const user = await me(ctx, t);
    if (user.name === name) return user;
    const before = user.name;
    user.name = name;
    await user.save({ transaction: t });
    await recordActivity(t, ctx, { action: 'person.renamed', targetType: 'user', targetId: user.id, summary: `${before} now goes by ${name}`, details: { before, after: name } });
    return user;
  });
}

/** Checks a person's current password, counted like a sign-in attempt (a stolen session must not become a password oracle). */
async function confirmPassword(deps: AccountDeps, user: User, password: string, ip: string, field: string) {
  const account = attemptOn(limits.signInAccount, user.email);
  const fromIp = attemptOn(limits.signInIp, ip);
  await countAttempt(deps.sequelize, [account, fromIp], deps.now(), 'password');
  if (!user.passwordHash || !(await checkPassword(password, user.passwordHash))) {
    throw problems.badRequest('Your current password is not right.', [{ path: field, message: 'is not your current password' }]);
  }
  await attemptSucceeded(deps.sequelize, account, [fromIp]);
}

/** A new password: every session of the person ends, and this browser gets a fresh one. */
export async function changePassword(deps: AccountDeps, ctx: RequestContext, input: { currentPassword: string; newPassword: string }, ip: string) {
  const user = await me(ctx);
  await confirmPassword(deps, user, input.currentPassword, ip, 'currentPassword');
  checkNewPassword(input.newPassword, 'newPassword');
  const hash = await hashPassword(input.newPassword, deps.passwordCost);
  return deps.sequelize.transaction(async (t) => {
    const locked = await me(ctx, t);
    locked.passwordHash = hash;
    await locked.save({ transaction: t });
    const ended = await revokeSessionsOf(deps.sequelize, locked.id, deps.now(), t);
    await recordActivity(t, ctx, {
      action: 'person.password_changed',
      targetType: 'user',
      targetId: locked.id,
      summary: `${locked.name} changed their password; ${ended === 1 ? 'their other session was' : 'all their sessions were'} signed out`,
      details: { sessionsEnded: ended },
    });
    return { user: locked, session: await issue(deps, locked, 'full', t) };
  });
}

// ─── Password resets ────────────────────────────────────────────────────────

export const resetAnswer = 'If that address belongs to someone on the team, a link to choose a new password is on its way. It works for one hour.';
const resetTtlS = 60 * 60;

/** Where mailed links point. In production only the configured public address is trusted (never the Host header). */
export function linkBase(config: AccountDeps['config'], requestOrigin: string): string {
  if (config.publicUrl) return config.publicUrl.replace(/\/+$/, '');
  if (config.production) throw problems.unavailable('Mailed links need HELIODOR_PUBLIC_URL: set it to the address people open the console at.', 3600);
  return requestOrigin;
}

/**
 * The answer is the same, after the same work, whether or not the address belongs to someone: count the
 * attempt, look the address up, answer. Writing the link and sending the e-mail happen after the answer.
 */
export async function requestPasswordReset(deps: AccountDeps, email: string, ip: string, origin: string, requestId: string | null) {
  const base = linkBase(deps.config, origin);
  await countAttempt(deps.sequelize, [attemptOn(limits.resetAccount, email), attemptOn(limits.resetIp, ip)], deps.now(), 'password-reset');
  const user = await findByEmail(email);
  const userId = user && user.joinedAt && !user.disabledAt ? user.id : null;
  if (!userId) return;
  deps.later.run('password-reset e-mail', async () => {
    const now = deps.now();
    const { token, expiresAt, to } = await deps.sequelize.transaction(async (t) => {
      const person = await User.findByPk(userId, { transaction: t, lock: t.LOCK.UPDATE });
      if (!person) throw new Error('the person left before the reset link was written');
      const link = await createLink(deps.sequelize, t, { userId, purpose: 'password_reset', createdBy: null, now, ttlS: resetTtlS });
      await recordActivity(t, contextOf(person, requestId), {
        action: 'person.password_reset_requested',
        targetType: 'user',
        targetId: person.id,
        summary: `A password-reset link was sent to ${person.name} (${person.email}), valid for one hour`,
      });
      return { ...link, to: person.email };
    });
    await deps.mailer.send({ to: [to], ...passwordResetMail({ link: `${base}/reset-password#t=${token}`, email: to, expiresAt }) });
  });
}

const linkNotValid = (what: string) =>
  new Problem(410, 'link-not-valid', 'This link no longer works', `This ${what} link has expired, was replaced by a newer one or was already used.`);

/** A new password from a reset link: the link is used up and every session of the person ends. */
export async function confirmPasswordReset(deps: AccountDeps, token: string, password: string, requestId: string | null) {
  const now = deps.now();
  const first = await findLink(deps.sequelize, token, 'password_reset');
  if (!first || !linkIsOpen(first, now)) throw linkNotValid('password-reset');
  checkNewPassword(password, 'password');
  const hash = await hashPassword(password, deps.passwordCost);
  await deps.sequelize.transaction(async (t) => {
    const link = await findLink(deps.sequelize, token, 'password_reset', t);
    if (!link || !linkIsOpen(link, deps.now())) throw linkNotValid('password-reset');
    const user = await User.findByPk(link.userId, { transaction: t, lock: t.LOCK.UPDATE });
    if (!user || user.disabledAt || !user.joinedAt) throw linkNotValid('password-reset');
    user.passwordHash = hash;
    await user.save({ transaction: t });
    await useLink(deps.sequelize, link.id, deps.now(), t);
    const ended = await revokeSessionsOf(deps.sequelize, user.id, deps.now(), t);
    await recordActivity(t, contextOf(user, requestId), {
      action: 'person.password_reset',
      targetType: 'user',
      targetId: user.id,
      summary: `${user.name} chose a new password from a reset link; ${ended} ${ended === 1 ? 'session' : 'sessions'} signed out`,
      details: { sessionsEnded: ended },
    });
  });
}

// ─── Second factor ──────────────────────────────────────────────────────────

/** A new secret to put in an authenticator app; it counts only once a code from it is confirmed. */
export async function startSecondFactor(deps: AccountDeps, ctx: RequestContext): Promise<SecondFactorSetup> {
  const user = await me(ctx);
  const secret = newTotpSecret();
  user.totpPendingSecret = seal(deps.config.dataKey, secret, pendingContext(user.id));
  await user.save();
  return { secret, uri: totpUri(secret, user.email) };
}

/** Turns the second factor on with a code from the new secret; answers ten recovery codes, shown once. */
export async function confirmSecondFactor(deps: AccountDeps, ctx: RequestContext, code: string, ip: string) {
  const first = await me(ctx);
  const account = attemptOn(limits.secondFactorAccount, first.id);
  const fromIp = attemptOn(limits.secondFactorIp, ip);
  await countAttempt(deps.sequelize, [account, fromIp], deps.now(), 'second-factor');
  const result = await deps.sequelize.transaction(async (t) => {
    const user = await me(ctx, t);
    if (!user.totpPendingSecret) throw problems.conflict('Start the set-up first: Heliodor has no new secret waiting for a code.');
    const secret = unseal(deps.config.dataKey, user.totpPendingSecret, pendingContext(user.id));
    const now = deps.now();
    const step = await checkTotp(secret, code, now, null);
    if (step === null) throw problems.badRequest('That code does not match the new secret.', [{ path: 'code', message: 'does not match; check the time on your phone and enter the code it shows now' }]);
    const replaced = Boolean(user.totpEnabledAt);
    user.totpSecret = seal(deps.config.dataKey, secret, totpContext(user.id));
    user.totpPendingSecret = null;
    user.totpEnabledAt = now;
    user.totpLastStep = step;
    await user.save({ transaction: t });
    const codes = newRecoveryCodes();
    await replaceRecoveryCodes(deps.sequelize, user.id, codes, now, t);
    const ended = await revokeSessionsOf(deps.sequelize, user.id, now, t);
    await recordActivity(t, ctx, {
      action: 'person.second_factor_on',
      targetType: 'user',
      targetId: user.id,
      summary: replaced
        ? `${user.name} moved their second factor to a new authenticator app and got new recovery codes`
        : `${user.name} turned on a second factor (authenticator app, 10 recovery codes)`,
      details: { replaced, sessionsEnded: ended },
    });
    return { user, codes, session: await issue(deps, user, 'full', t) };
  });
  await attemptSucceeded(deps.sequelize, account, [fromIp]);
  return result;
}

/** Turns one's own second factor off (with the password); not for roles that require it in production. */
export async function turnOffSecondFactor(deps: AccountDeps, ctx: RequestContext, password: string, ip: string) {
  const user = await me(ctx);
  if (!user.totpEnabledAt) throw problems.conflict('Your second factor is already off.');
  if (deps.config.production && needsSecondFactor(user.role)) {
    throw problems.conflict('Your role can ship firmware, so a second factor is required here. Set up a new one instead of turning it off.', { rule: 'second-factor-required' });
  }
  await confirmPassword(deps, user, password, ip, 'password');
  return deps.sequelize.transaction(async (t) => {
    const locked = await me(ctx, t);
    await clearSecondFactor(deps, locked, t);
    const ended = await revokeSessionsOf(deps.sequelize, locked.id, deps.now(), t);
    await recordActivity(t, ctx, {
      action: 'person.second_factor_off',
      targetType: 'user',
      targetId: locked.id,
      summary: `${locked.name} turned off their second factor; their other sessions were signed out`,
      details: { sessionsEnded: ended },
    });
    return { user: locked, session: await issue(deps, locked, 'full', t) };
  });
}

export async function clearSecondFactor(deps: Pick<AccountDeps, 'sequelize'>, user: User, t: Transaction) {
  user.totpSecret = null;
  user.totpPendingSecret = null;
  user.totpEnabledAt = null;
  user.totpLastStep = null;
  await user.save({ transaction: t });
  await replaceRecoveryCodes(deps.sequelize, user.id, [], new Date(), t);
}
