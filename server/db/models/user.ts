import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';
import type { Role } from '../../../schemas/auth';

/**
 * A person on the team. Invited people have no password and no `joinedAt` until they accept; disabled
 * people keep their row (they stay the author of what they did). Second-factor secrets are stored sealed
 * (server/auth/sealed.ts), never in clear.
 */
export class User extends Model<InferAttributes<User>, InferCreationAttributes<User>> {
  declare id: CreationOptional<string>;
  declare email: string;
  declare name: string;
  declare role: Role;
  declare passwordHash: string | null;
  declare disabledAt: CreationOptional<Date | null>;
  declare joinedAt: CreationOptional<Date | null>;
  declare invitedBy: CreationOptional<string | null>;
  declare lastSignInAt: CreationOptional<Date | null>;
  declare totpSecret: CreationOptional<string | null>;
  declare totpPendingSecret: CreationOptional<string | null>;
  declare totpEnabledAt: CreationOptional<Date | null>;
  declare totpLastStep: CreationOptional<number | null>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    User.init(
      {
        id: { type: DataTypes.UUID, primaryKey: true, defaultValue: DataTypes.UUIDV4 },
        email: { type: DataTypes.TEXT, allowNull: false },
        name: { type: DataTypes.TEXT, allowNull: false },
        role: { type: DataTypes.TEXT, allowNull: false },
        passwordHash: { type: DataTypes.TEXT, allowNull: true },
        disabledAt: { type: DataTypes.DATE, allowNull: true },
        // The database fills in now() when a person is created directly (seed, admin:create); invitations set null.
        joinedAt: { type: DataTypes.DATE, allowNull: true, defaultValue: DataTypes.NOW },
        invitedBy: { type: DataTypes.UUID, allowNull: true },
        lastSignInAt: { type: DataTypes.DATE, allowNull: true },
        totpSecret: { type: DataTypes.TEXT, allowNull: true },
        totpPendingSecret: { type: DataTypes.TEXT, allowNull: true },
        totpEnabledAt: { type: DataTypes.DATE, allowNull: true },
        totpLastStep: { type: DataTypes.BIGINT, allowNull: true },
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'users', underscored: true },
    );
  }
}

/** invited until they accept; disabled when an admin turned them off; active otherwise. */
export function personStatus(user: Pick<User, 'disabledAt' | 'joinedAt'>): 'invited' | 'active' | 'disabled' {
  if (user.disabledAt) return 'disabled';
  return user.joinedAt ? 'active' : 'invited';
}
