// The domain words as SQL replacements. Statements name them (`state IN (:liveStates)`,
// `l.status = :enrolled`) and spread SQL_WORDS into their replacements, so a list is declared once in
// schemas/words.ts and no query spells a state, channel or reason out (tests/unit/sql-words.test.ts).
// Sequelize expands an array replacement to a comma list: use it inside `IN (…)` or `ARRAY[…]`.
import {
  CHANNELS,
  COUNTED_RESET_REASONS,
  INSTALL_STATES,
  LIVE_STATES,
  REACHED_STATES,
  TRANSIENT_FAILURE_REASONS,
  UNDER_WAY_INSTALL_STATES,
  type Channel,
  type FailureReason,
  type InstallState,
  type LoggerStatus,
  type ReleaseState,
  type ResetReason,
  type UpdateState,
} from '../../schemas/words';

const release = <S extends ReleaseState>(s: S) => s;
const channel = <S extends Channel>(s: S) => s;
const install = <S extends InstallState>(s: S) => s;
const status = <S extends LoggerStatus>(s: S) => s;
const update = <S extends UpdateState>(s: S) => s;
const reason = <S extends FailureReason | ResetReason>(s: S) => s;

export const SQL_WORDS = {
  // releases
  liveStates: [...LIVE_STATES],
  reachedStates: [...REACHED_STATES],
  draft: release('draft'),
  complete: release('complete'),
  withdrawn: release('withdrawn'),
  channels: [...CHANNELS],
  stable: channel('stable'),
  // installs
  installStates: [...INSTALL_STATES],
  underWay: [...UNDER_WAY_INSTALL_STATES],
  offered: install('offered'),
  downloading: install('downloading'),
  downloaded: install('downloaded'),
  installing: install('installing'),
  installed: install('installed'),
  failed: install('failed'),
  transientReasons: [...TRANSIENT_FAILURE_REASONS],
  otherReason: reason('other'),
  // loggers
  registered: status('registered'),
  enrolled: status('enrolled'),
  retired: status('retired'),
  countedResets: [...COUNTED_RESET_REASONS],
  powerOn: reason('power_on'),
  software: reason('software'),
  // update states
  upToDate: update('up_to_date'),
  behind: update('behind'),
} as const;
