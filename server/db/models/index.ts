// Registers every Sequelize model on one instance. Later domains add their init call here.
import type { Sequelize } from 'sequelize';
import { User } from './user';
import { Activity } from './activity';
import { initRegistryModels } from './registry';
import { initReleaseModels } from './releases';
import { initDeviceModels } from './device';

export { User, personStatus } from './user';
export { Activity } from './activity';
export * from './registry';
export * from './releases';
export * from './device';

export function initModels(sequelize: Sequelize) {
  User.initModel(sequelize);
  Activity.initModel(sequelize);
  initRegistryModels(sequelize);
  initReleaseModels(sequelize);
  initDeviceModels(sequelize);
}
