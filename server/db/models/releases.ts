// Signing keys, automation tokens, firmware images, releases and their history, install reports.
import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';
import type { SignatureAlgorithm } from '../../../schemas/manifest';
import { DRIFT_TRIP_POINT_NAMES, DRIFT_TRIP_POINTS, type DriftTripPoint, type ReleaseAction, type ReleaseState, type ResumeState, type StoppedBy } from '../../../schemas/words';
import type { Scope } from '../../auth/actor';
import type { ActorType } from './activity';
import type { Channel } from './registry';

export type KeyState = 'active' | 'retired' | 'revoked';
export type InstallReportState = 'offered' | 'downloading' | 'downloaded' | 'installing' | 'installed' | 'failed';

export class SigningKey extends Model<InferAttributes<SigningKey>, InferCreationAttributes<SigningKey>> {
  declare id: CreationOptional<string>;
  declare name: string;
  declare keyId: string;
  declare algorithm: SignatureAlgorithm;
  declare publicKeyPem: string;
  declare state: CreationOptional<KeyState>;
  declare createdBy: string | null;
  declare createdAt: CreationOptional<Date>;
  declare retiredAt: CreationOptional<Date | null>;
  declare revokedAt: CreationOptional<Date | null>;
}

export class ApiToken extends Model<InferAttributes<ApiToken>, InferCreationAttributes<ApiToken>> {
  declare id: CreationOptional<string>;
  declare name: string;
  declare tokenDigest: string;
  declare scopes: Scope[];
  declare expiresAt: Date;
  declare lastUsedAt: CreationOptional<Date | null>;
  declare createdBy: string | null;
  declare createdAt: CreationOptional<Date>;
  declare revokedAt: CreationOptional<Date | null>;
}

export class Image extends Model<InferAttributes<Image>, InferCreationAttributes<Image>> {
  declare sha256: string;
  declare size: number;
  declare createdAt: CreationOptional<Date>;
}

export class Release extends Model<InferAttributes<Release>, InferCreationAttributes<Release>> {
  declare id: CreationOptional<string>;
  declare modelId: string;
  declare version: string;
  declare channel: Channel;
  declare state: CreationOptional<ReleaseState>;
  declare share: CreationOptional<number>;
  declare resumeState: CreationOptional<ResumeState | null>;
  declare boards: string[];
  declare manifestBoards: string[];
  declare upgradeFrom: CreationOptional<string | null>;
  declare daylightWindow: CreationOptional<boolean>;
  declare tripFailureRatio: CreationOptional<number>;
  declare tripMinReports: CreationOptional<number>;
  declare tripResetFactor: CreationOptional<number>;
  /** The measurement-drift trip points (schemas/words.ts DRIFT_TRIP_POINTS; the `satisfies` below keeps these in step). */
  declare tripDriftEnergy: CreationOptional<number>;
  declare tripDriftTempC: CreationOptional<number>;
  declare tripDriftFlagged: CreationOptional<number>;
  declare securityCounter: number;
  declare imageSha256: string;
  declare manifest: Buffer;
  declare signature: Buffer;
  declare signingKeyId: string;
  declare notes: CreationOptional<string>;
  declare createdBy: string | null;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
  declare pilotedAt: CreationOptional<Date | null>;
  declare widenedAt: CreationOptional<Date | null>;
  declare completedAt: CreationOptional<Date | null>;
  declare stoppedAt: CreationOptional<Date | null>;
  /** Who stopped a stopped release: a person, or the trip rule. */
  declare stoppedBy: CreationOptional<StoppedBy | null>;
  /** The figures a trip judged, kept with the release it stopped. */
  declare tripFigures: CreationOptional<Record<string, unknown> | null>;
  /** The manifest's `expires`, when it carries one: nothing is offered after it. */
  declare expiresAt: CreationOptional<Date | null>;
}

export class ReleasePilotSite extends Model<InferAttributes<ReleasePilotSite>, InferCreationAttributes<ReleasePilotSite>> {
  declare releaseId: string;
  declare siteId: string;
}

export class ReleaseTransition extends Model<InferAttributes<ReleaseTransition>, InferCreationAttributes<ReleaseTransition>> {
  declare id: CreationOptional<number>;
  declare releaseId: string;
  declare at: Date;
  /** A lifecycle action, or "upload" for the row that created the draft. */
  declare action: ReleaseAction | 'upload';
  declare fromState: ReleaseState | null;
  declare toState: ReleaseState;
  declare share: number;
  declare reason: string | null;
  declare actorType: ActorType;
  declare actorName: string;
}

export class InstallReport extends Model<InferAttributes<InstallReport>, InferCreationAttributes<InstallReport>> {
  declare loggerId: string;
  declare releaseId: string;
  declare state: InstallReportState;
  declare reason: string | null;
  declare detail: string | null;
  /** The first offer to this logger; null for a report about the release it runs, which was never offered to it. */
  declare offeredAt: Date | null;
  declare updatedAt: Date;
  declare finishedAt: Date | null;
  declare confirmedAt: Date | null;
  declare retriedAt: Date | null;
}

const uuid = () => ({ type: DataTypes.UUID, primaryKey: true, defaultValue: DataTypes.UUIDV4 });
const date = (allowNull = true) => ({ type: DataTypes.DATE, allowNull });
/** NUMERIC columns: Sequelize hands them over as text; the API speaks numbers. */
const numeric = (name: string, defaultValue?: number) => ({
  type: DataTypes.DECIMAL,
  allowNull: false,
  ...(defaultValue === undefined ? {} : { defaultValue }),
  get(this: Model) {
    const value = this.getDataValue(name);
    return value === null || value === undefined ? value : Number(value);
  },
});

export function initReleaseModels(sequelize: Sequelize) {
  SigningKey.init(
    {
      id: uuid(),
      name: { type: DataTypes.TEXT, allowNull: false },
      keyId: { type: DataTypes.CHAR(16), allowNull: false },
      algorithm: { type: DataTypes.TEXT, allowNull: false },
      publicKeyPem: { type: DataTypes.TEXT, allowNull: false },
      state: { type: DataTypes.TEXT, allowNull: false, defaultValue: 'active' },
      createdBy: { type: DataTypes.UUID, allowNull: true },
      createdAt: DataTypes.DATE,
      retiredAt: date(),
      revokedAt: date(),
    },
    { sequelize, tableName: 'signing_keys', underscored: true, updatedAt: false },
  );
  ApiToken.init(
    {
      id: uuid(),
      name: { type: DataTypes.TEXT, allowNull: false },
      tokenDigest: { type: DataTypes.CHAR(64), allowNull: false },
      scopes: { type: DataTypes.ARRAY(DataTypes.TEXT), allowNull: false },
      expiresAt: date(false),
      lastUsedAt: date(),
      createdBy: { type: DataTypes.UUID, allowNull: true },
      createdAt: DataTypes.DATE,
      revokedAt: date(),
    },
    { sequelize, tableName: 'api_tokens', underscored: true, updatedAt: false },
  );
  Image.init(
    {
      sha256: { type: DataTypes.CHAR(64), primaryKey: true },
      size: { type: DataTypes.BIGINT, allowNull: false },
      createdAt: DataTypes.DATE,
    },
    { sequelize, tableName: 'images', underscored: true, updatedAt: false },
  );
  Release.init(
    {
      id: uuid(),
      modelId: { type: DataTypes.UUID, allowNull: false },
      version: { type: DataTypes.TEXT, allowNull: false },
      channel: { type: DataTypes.TEXT, allowNull: false },
      state: { type: DataTypes.TEXT, allowNull: false, defaultValue: 'draft' },
      share: numeric('share', 0),
      resumeState: { type: DataTypes.TEXT, allowNull: true },
      boards: { type: DataTypes.ARRAY(DataTypes.TEXT), allowNull: false },
      manifestBoards: { type: DataTypes.ARRAY(DataTypes.TEXT), allowNull: false },
      upgradeFrom: { type: DataTypes.TEXT, allowNull: true },
      daylightWindow: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
      tripFailureRatio: numeric('tripFailureRatio', 0.05),
      tripMinReports: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 20 },
      tripResetFactor: numeric('tripResetFactor', 2),
      ...(Object.fromEntries(DRIFT_TRIP_POINT_NAMES.map((n) => [n, numeric(n, DRIFT_TRIP_POINTS[n])])) as Record<DriftTripPoint, ReturnType<typeof numeric>>),
      securityCounter: { type: DataTypes.BIGINT, allowNull: false },
      imageSha256: { type: DataTypes.CHAR(64), allowNull: false },
      manifest: { type: DataTypes.BLOB, allowNull: false },
      signature: { type: DataTypes.BLOB, allowNull: false },
      signingKeyId: { type: DataTypes.UUID, allowNull: false },
      notes: { type: DataTypes.TEXT, allowNull: false, defaultValue: '' },
      createdBy: { type: DataTypes.UUID, allowNull: true },
      createdAt: DataTypes.DATE,
      updatedAt: DataTypes.DATE,
      pilotedAt: date(),
      widenedAt: date(),
      completedAt: date(),
      stoppedAt: date(),
      stoppedBy: { type: DataTypes.TEXT, allowNull: true },
      tripFigures: { type: DataTypes.JSONB, allowNull: true },
      expiresAt: { type: DataTypes.DATE, allowNull: true },
    },
    { sequelize, tableName: 'releases', underscored: true },
  );
  ReleasePilotSite.init(
    {
      releaseId: { type: DataTypes.UUID, primaryKey: true },
      siteId: { type: DataTypes.UUID, primaryKey: true },
    },
    { sequelize, tableName: 'release_pilot_sites', underscored: true, timestamps: false },
  );
  ReleaseTransition.init(
    {
      id: { type: DataTypes.BIGINT, primaryKey: true, autoIncrement: true },
      releaseId: { type: DataTypes.UUID, allowNull: false },
      at: date(false),
      action: { type: DataTypes.TEXT, allowNull: false },
      fromState: { type: DataTypes.TEXT, allowNull: true },
      toState: { type: DataTypes.TEXT, allowNull: false },
      share: numeric('share'),
      reason: { type: DataTypes.TEXT, allowNull: true },
      actorType: { type: DataTypes.TEXT, allowNull: false },
      actorName: { type: DataTypes.TEXT, allowNull: false },
    },
    { sequelize, tableName: 'release_transitions', underscored: true, timestamps: false },
  );
  InstallReport.init(
    {
      loggerId: { type: DataTypes.UUID, primaryKey: true },
      releaseId: { type: DataTypes.UUID, primaryKey: true },
      state: { type: DataTypes.TEXT, allowNull: false },
      reason: { type: DataTypes.TEXT, allowNull: true },
      detail: { type: DataTypes.TEXT, allowNull: true },
      offeredAt: date(),
      updatedAt: date(false),
      finishedAt: date(),
      confirmedAt: date(),
      retriedAt: date(),
    },
    { sequelize, tableName: 'install_reports', underscored: true, timestamps: false },
  );
}

// Every drift trip point is an attribute of the release: a name added to DRIFT_TRIP_POINTS without its
// `declare` above fails here.
export type ReleaseDriftTripPoints = Pick<Release, DriftTripPoint>;
