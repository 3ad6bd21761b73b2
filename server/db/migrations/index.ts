// Every migration in order. Add a file named NNNN_what.ts exporting up/down, then list it here.
import type { Sequelize, Transaction } from 'sequelize';
import * as m0001 from './0001_people_and_activity';
import * as m0002 from './0002_registry';
import * as m0003 from './0003_releases';
import * as m0004 from './0004_device';
import * as m0005 from './0005_registry_more';
import * as m0006 from './0006_fleet';
import * as m0007 from './0007_own_words';
import * as m0008 from './0008_metrics_scope';
import * as m0009 from './0009_team';
import * as m0010 from './0010_logger_batches';
import * as m0011 from './0011_function_search_path';
import * as m0012 from './0012_device_bounds';
import * as m0013 from './0013_fleet_keys';
import * as m0014 from './0014_summaries';
import * as m0015 from './0015_device_check_in_windows';
import * as m0016 from './0016_release_trust';
import * as m0017 from './0017_enrollment_requests';
import * as m0018 from './0018_site_min_temp';
import * as m0019 from './0019_measurement_drift';
import * as m0020 from './0020_commissioning_checks';
import * as m0021 from './0021_lagging_site_order';
import * as m0022 from './0022_summary_upkeep';
import * as m0023 from './0023_flag_indexes';

export type Migration = {
  name: string;
  up: (sequelize: Sequelize, transaction: Transaction) => Promise<void>;
  down: (sequelize: Sequelize, transaction: Transaction) => Promise<void>;
};

export const migrations: Migration[] = [
  { name: '0001_people_and_activity', ...m0001 },
  { name: '0002_registry', ...m0002 },
  { name: '0003_releases', ...m0003 },
  { name: '0004_device', ...m0004 },
  { name: '0005_registry_more', ...m0005 },
  { name: '0006_fleet', ...m0006 },
  { name: '0007_own_words', ...m0007 },
  { name: '0008_metrics_scope', ...m0008 },
  { name: '0009_team', ...m0009 },
  { name: '0010_logger_batches', ...m0010 },
  { name: '0011_function_search_path', ...m0011 },
  { name: '0012_device_bounds', ...m0012 },
  { name: '0013_fleet_keys', ...m0013 },
  { name: '0014_summaries', ...m0014 },
  { name: '0015_device_check_in_windows', ...m0015 },
  { name: '0016_release_trust', ...m0016 },
  { name: '0017_enrollment_requests', ...m0017 },
  { name: '0018_site_min_temp', ...m0018 },
  { name: '0019_measurement_drift', ...m0019 },
  { name: '0020_commissioning_checks', ...m0020 },
  { name: '0021_lagging_site_order', ...m0021 },
  { name: '0022_summary_upkeep', ...m0022 },
  { name: '0023_flag_indexes', ...m0023 },
];
