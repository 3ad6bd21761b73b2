import type { Sequelize } from 'sequelize';
import { fn, col, where } from 'sequelize';
import { User } from '../db/models';
import { problems } from '../http/problem';
import { recordActivity } from '../activity/service';
import type { Me } from '../../schemas/auth';
import { checkPassword, decoyHash } from './passwords';

export const presentUser = (user: User): Me => ({ id: user.id, email: user.email, name: user.name, role: user.role });

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
