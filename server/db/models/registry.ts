import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';

export type BoardRevision = { label: string; note: string };
export type Channel = 'stable' | 'early';
export type LoggerStatus = 'registered' | 'enrolled' | 'retired';

/** A logger model (hardware design), e.g. "FL-2 field logger". Named LoggerModel to avoid Sequelize's Model. */
export class LoggerModel extends Model<InferAttributes<LoggerModel>, InferCreationAttributes<LoggerModel>> {
  declare id: CreationOptional<string>;
  declare name: string;
  declare boards: BoardRevision[];
  declare minUpdateSupplyV: number;
  declare checkInIntervalS: number;
  declare busVMax: number;
  declare shuntFullScaleV: number;
  declare tempResolutions: number[];
  /** How many distinct registered, unrevoked keys must sign a release (k of n). */
  declare signingThreshold: CreationOptional<number>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export class Site extends Model<InferAttributes<Site>, InferCreationAttributes<Site>> {
  declare id: CreationOptional<string>;
  declare name: string;
  declare customer: CreationOptional<string>;
  declare address: CreationOptional<string>;
  declare latitude: number | null;
  declare longitude: number | null;
  declare minTempC: number | null;
  declare timeZone: CreationOptional<string>;
  declare notes: CreationOptional<string>;
  declare createdBy: string | null;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export class SiteIntegrator extends Model<InferAttributes<SiteIntegrator>, InferCreationAttributes<SiteIntegrator>> {
  declare siteId: string;
  declare userId: string;
}

export class Logger extends Model<InferAttributes<Logger>, InferCreationAttributes<Logger>> {
  declare id: CreationOptional<string>;
  declare serial: string;
  declare modelId: string;
  declare board: string;
  declare channel: CreationOptional<Channel>;
  declare status: CreationOptional<LoggerStatus>;
  declare tokenDigest: string | null;
  declare tokenIssuedAt: Date | null;
  declare siteId: CreationOptional<string | null>;
  declare enrolledAt: CreationOptional<Date | null>;
  declare enrolledBy: CreationOptional<string | null>;
  declare install: CreationOptional<Record<string, unknown> | null>;
  declare registeredBy: string | null;
  /** The CSV batch it was registered in (null: registered one at a time, or before batches were kept). */
  declare batchId: CreationOptional<string | null>;
  declare retiredAt: CreationOptional<Date | null>;
  declare firmware: CreationOptional<string | null>;
  declare supplyV: CreationOptional<number | null>;
  declare lastSeenAt: CreationOptional<Date | null>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export class MeasurementProfile extends Model<InferAttributes<MeasurementProfile>, InferCreationAttributes<MeasurementProfile>> {
  declare id: CreationOptional<string>;
  declare loggerId: string;
  declare version: number;
  declare panelWp: number | null;
  declare panelVocV: number | null;
  declare shuntOhm: number;
  declare maxCurrentA: number;
  declare currentLsbA: number;
  declare calibration: number;
  declare powerLsbW: number;
  declare busVMax: number;
  declare tempResolutionBits: number;
  declare sampleIntervalS: number;
  declare createdBy: string | null;
  declare createdAt: CreationOptional<Date>;
}

const uuid = () => ({ type: DataTypes.UUID, primaryKey: true, defaultValue: DataTypes.UUIDV4 });
const num = (allowNull = false) => ({ type: DataTypes.DOUBLE, allowNull });

export function initRegistryModels(sequelize: Sequelize) {
  LoggerModel.init(
    {
      id: uuid(),
      name: { type: DataTypes.TEXT, allowNull: false },
      boards: { type: DataTypes.JSONB, allowNull: false },
      minUpdateSupplyV: num(),
      checkInIntervalS: { type: DataTypes.INTEGER, allowNull: false },
      busVMax: num(),
      shuntFullScaleV: num(),
      tempResolutions: { type: DataTypes.ARRAY(DataTypes.INTEGER), allowNull: false },
      signingThreshold: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 1 },
      createdAt: DataTypes.DATE,
      updatedAt: DataTypes.DATE,
    },
    { sequelize, tableName: 'models', underscored: true },
  );
  Site.init(
    {
      id: uuid(),
      name: { type: DataTypes.TEXT, allowNull: false },
      customer: { type: DataTypes.TEXT, allowNull: false, defaultValue: '' },
      address: { type: DataTypes.TEXT, allowNull: false, defaultValue: '' },
      latitude: num(true),
      longitude: num(true),
      minTempC: num(true),
      timeZone: { type: DataTypes.TEXT, allowNull: false, defaultValue: 'UTC' },
      notes: { type: DataTypes.TEXT, allowNull: false, defaultValue: '' },
      createdBy: { type: DataTypes.UUID, allowNull: true },
      createdAt: DataTypes.DATE,
      updatedAt: DataTypes.DATE,
    },
    { sequelize, tableName: 'sites', underscored: true },
  );
  SiteIntegrator.init(
    {
      siteId: { type: DataTypes.UUID, primaryKey: true },
      userId: { type: DataTypes.UUID, primaryKey: true },
    },
    { sequelize, tableName: 'site_integrators', underscored: true, timestamps: false },
  );
  Logger.init(
    {
      id: uuid(),
      serial: { type: DataTypes.TEXT, allowNull: false },
      modelId: { type: DataTypes.UUID, allowNull: false },
      board: { type: DataTypes.TEXT, allowNull: false },
      channel: { type: DataTypes.TEXT, allowNull: false, defaultValue: 'stable' },
      status: { type: DataTypes.TEXT, allowNull: false, defaultValue: 'registered' },
      tokenDigest: { type: DataTypes.CHAR(64), allowNull: true },
      tokenIssuedAt: { type: DataTypes.DATE, allowNull: true },
      siteId: { type: DataTypes.UUID, allowNull: true },
      enrolledAt: { type: DataTypes.DATE, allowNull: true },
      enrolledBy: { type: DataTypes.UUID, allowNull: true },
      install: { type: DataTypes.JSONB, allowNull: true },
      registeredBy: { type: DataTypes.UUID, allowNull: true },
      batchId: { type: DataTypes.UUID, allowNull: true },
      retiredAt: { type: DataTypes.DATE, allowNull: true },
      firmware: { type: DataTypes.TEXT, allowNull: true },
      supplyV: num(true),
      lastSeenAt: { type: DataTypes.DATE, allowNull: true },
      createdAt: DataTypes.DATE,
      updatedAt: DataTypes.DATE,
    },
    { sequelize, tableName: 'loggers', underscored: true },
  );
  MeasurementProfile.init(
    {
      id: uuid(),
      loggerId: { type: DataTypes.UUID, allowNull: false },
      version: { type: DataTypes.INTEGER, allowNull: false },
      panelWp: num(true),
      panelVocV: num(true),
      shuntOhm: num(),
      maxCurrentA: num(),
      currentLsbA: num(),
      calibration: { type: DataTypes.INTEGER, allowNull: false },
      powerLsbW: num(),
      busVMax: num(),
      tempResolutionBits: { type: DataTypes.INTEGER, allowNull: false },
      sampleIntervalS: { type: DataTypes.INTEGER, allowNull: false },
      createdBy: { type: DataTypes.UUID, allowNull: true },
      createdAt: DataTypes.DATE,
    },
    { sequelize, tableName: 'measurement_profiles', underscored: true, updatedAt: false },
  );
  Logger.belongsTo(LoggerModel, { foreignKey: 'modelId', as: 'model' });
  Logger.belongsTo(Site, { foreignKey: 'siteId', as: 'site' });
  Site.hasMany(Logger, { foreignKey: 'siteId', as: 'loggers' });
}
