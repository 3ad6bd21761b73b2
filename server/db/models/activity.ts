import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';

import type { ActorType } from '../../../schemas/activity';

export type { ActorType };

export class Activity extends Model<InferAttributes<Activity>, InferCreationAttributes<Activity>> {
  declare id: CreationOptional<number>;
  declare at: CreationOptional<Date>;
  declare actorType: ActorType;
  declare actorId: string | null;
  declare actorName: string;
  declare action: string;
  declare targetType: string;
  declare targetId: string | null;
  declare summary: string;
  declare requestId: string | null;
  declare details: Record<string, unknown> | null;

  static initModel(sequelize: Sequelize) {
    Activity.init(
      {
        id: { type: DataTypes.BIGINT, primaryKey: true, autoIncrement: true },
        at: { type: DataTypes.DATE, defaultValue: DataTypes.NOW },
        actorType: { type: DataTypes.TEXT, allowNull: false },
        actorId: { type: DataTypes.UUID, allowNull: true },
        actorName: { type: DataTypes.TEXT, allowNull: false },
        action: { type: DataTypes.TEXT, allowNull: false },
        targetType: { type: DataTypes.TEXT, allowNull: false },
        targetId: { type: DataTypes.TEXT, allowNull: true },
        summary: { type: DataTypes.TEXT, allowNull: false },
        requestId: { type: DataTypes.TEXT, allowNull: true },
        details: { type: DataTypes.JSONB, allowNull: true },
      },
      { sequelize, tableName: 'activity', underscored: true, timestamps: false },
    );
  }
}
