// The device API's tables (migration 0004): check-in history, partitioned by day. The logger's
// latest reported state lives in columns of `loggers` (see LoggerDeviceState) and is written by the
// check-in service in SQL, one UPDATE per check-in.
import { DataTypes, Model, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';

export type ResetTally = Partial<Record<'power_on' | 'watchdog' | 'brownout' | 'software' | 'exception' | 'external' | 'unknown', number>>;
export type DeviceReadings = { bus_v?: number; current_a?: number; power_w?: number; energy_wh?: number; temp_c?: number };

/** One check-in as the logger sent it (history; rows older than the retention window are dropped with their day). */
export class CheckIn extends Model<InferAttributes<CheckIn>, InferCreationAttributes<CheckIn>> {
  declare loggerId: string;
  declare at: Date;
  declare firmware: string;
  declare board: string;
  declare securityCounter: number;
  declare supplyV: number | null;
  declare readings: DeviceReadings | null;
  declare resetReason: string | null;
  declare resets: ResetTally | null;
  declare rssiDbm: number | null;
  declare freeHeapB: number | null;
  declare uptimeS: number | null;
  declare configVersion: number | null;
  declare ip: string | null;
}

/** The latest-state columns migration 0004 adds to `loggers` (read them with raw SQL or a scope). */
export type LoggerDeviceState = {
  reportedBoard: string | null;
  securityCounter: number;
  readings: DeviceReadings | null;
  lastIp: string | null;
  rssiDbm: number | null;
  freeHeapB: number | null;
  uptimeS: number | null;
  configVersion: number | null;
  lastResetReason: string | null;
  lastCheckInAt: Date | null;
  checkInCount: number;
};

export function initDeviceModels(sequelize: Sequelize) {
  CheckIn.init(
    {
      loggerId: { type: DataTypes.UUID, allowNull: false },
      at: { type: DataTypes.DATE, allowNull: false },
      firmware: { type: DataTypes.TEXT, allowNull: false },
      board: { type: DataTypes.TEXT, allowNull: false },
      securityCounter: { type: DataTypes.BIGINT, allowNull: false },
      supplyV: { type: DataTypes.DOUBLE, allowNull: true },
      readings: { type: DataTypes.JSONB, allowNull: true },
      resetReason: { type: DataTypes.TEXT, allowNull: true },
      resets: { type: DataTypes.JSONB, allowNull: true },
      rssiDbm: { type: DataTypes.INTEGER, allowNull: true },
      freeHeapB: { type: DataTypes.BIGINT, allowNull: true },
      uptimeS: { type: DataTypes.BIGINT, allowNull: true },
      configVersion: { type: DataTypes.INTEGER, allowNull: true },
      ip: { type: DataTypes.TEXT, allowNull: true },
    },
    { sequelize, tableName: 'check_ins', underscored: true, timestamps: false },
  );
  // A history table without a key of its own.
  CheckIn.removeAttribute('id');
}
