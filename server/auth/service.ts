import type { Sequelize } from 'sequelize';
import { fn, col, where } from 'sequelize';
import { User } from '../db/models';
import { problems } from '../http/problem';
import { recordActivity } from '../activity/service';
import type { Me, Person } from '../../schemas/auth';
import { checkPassword, decoyHash } from './passwords';
import type { Actor } from './actor';
import { canOf, consoleResource } from './policies';

/** The signed-in person, with what they may start in the console (`can`). */
export function presentMe(actor: Extract<Actor, { type: 'person' }>): Me {
  return { id: actor.id, email: actor.email, name: actor.name, role: actor.role, can: canOf(actor, consoleResource) };
}

/** The signed-in person as the sign-in answers them. */
export const presentUser = (user: User): Me => presentMe({ type: 'person', id: user.id, name: user.name, email: user.email, role: user.role });

/** A person on the team, as GET /api/users lists them. */
export const presentPerson = (user: User): Person => ({ id: user.id, email: user.email, name: user.name, role: user.role });

const wrongCredentials = () => problems.unauthorized('The e-mail or password is not right.');

/** Checks the credentials; unknown e-mail and wrong password fail the same way and take the same time. */
export async function signIn(sequelize: Sequelize, email: string, password: string, requestId: string | null): Promise<User> {
  const user = await User.findOne({ where: where(fn('lower', col('email')), email.toLowerCase()) });
  const ok = await checkPassword(password, user?.passwordHash ?? decoyHash);
  if (!user || !ok || user.disabledAt) throw wrongCredentials();
  await sequelize.transaction((t) =>
    recordActivity(t, { actor: { type: 'person', id: user.id, name: user.name, email: user.email, role: user.role }, requestId }, {
      action: 'person.signed_in',
      targetType: 'user',
      targetId: user.id,
      summary: `${user.name} signed in`,
    }),
  );
  return user;
}
