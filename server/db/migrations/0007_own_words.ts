// Heliodor's own release words: a release widens (was "expanding"), stops (was "halted") and trips
// when a trip point is passed; loggers and releases follow a channel (was "track"). Data keeps its
// meaning: states, transition actions and activity codes are rewritten in place, and `down` restores
// the earlier words exactly. A stopped release also records who stopped it (a person, or the trip
// rule) and, when it tripped, the figures that tripped it.
import type { Sequelize, Transaction } from 'sequelize';

/** Earlier word → our word, for release states and transition actions. */
const STATES: [string, string][] = [['expanding', 'widening'], ['halted', 'stopped']];
const ACTIONS: [string, string][] = [['expand', 'widen'], ['halt', 'stop']];
/** Earlier activity code → the event's code (one code per event, whoever caused it). */
const ACTIVITY: [string, string][] = [
  ['release.start_pilot', 'release.pilot_started'],
  ['release.expand', 'release.widened'],
  ['release.complete', 'release.completed'],
  ['release.pause', 'release.paused'],
  ['release.resume', 'release.resumed'],
  ['release.withdraw', 'release.withdrawn'],
];
const COLUMNS: [string, string, string][] = [
  ['releases', 'track', 'channel'],
  ['loggers', 'track', 'channel'],
  ['releases', 'halt_failure_ratio', 'trip_failure_ratio'],
  ['releases', 'halt_min_reports', 'trip_min_reports'],
  ['releases', 'halt_reset_factor', 'trip_reset_factor'],
  ['releases', 'expanded_at', 'widened_at'],
  ['releases', 'halted_at', 'stopped_at'],
];

const stateList = (words: string[]) => words.map((w) => `'${w}'`).join(', ');
const OLD_STATES = ['draft', 'pilot', 'expanding', 'complete', 'paused', 'halted', 'withdrawn'];
const NEW_STATES = ['draft', 'pilot', 'widening', 'complete', 'paused', 'stopped', 'withdrawn'];
const OLD_RESUME = ['pilot', 'expanding', 'complete', 'paused'];
const NEW_RESUME = ['pilot', 'widening', 'complete', 'paused'];

async function renameWords(sequelize: Sequelize, t: Transaction, pairs: [string, string][], sql: (from: string, to: string) => string) {
  for (const [from, to] of pairs) await sequelize.query(sql(from, to), { transaction: t });
}

export async function up(sequelize: Sequelize, transaction: Transaction) {
  const q = (sql: string) => sequelize.query(sql, { transaction });
  await q(`ALTER TABLE releases DROP CONSTRAINT releases_state_check, DROP CONSTRAINT releases_resume_state_check`);
  await renameWords(sequelize, transaction, STATES, (a, b) =>
    `UPDATE releases SET state = CASE WHEN state = '${a}' THEN '${b}' ELSE state END,
                         resume_state = CASE WHEN resume_state = '${a}' THEN '${b}' ELSE resume_state END
      WHERE state = '${a}' OR resume_state = '${a}'`);
  await q(`ALTER TABLE releases ADD CONSTRAINT releases_state_check CHECK (state IN (${stateList(NEW_STATES)})),
                                ADD CONSTRAINT releases_resume_state_check CHECK (resume_state IN (${stateList(NEW_RESUME)}))`);
  for (const [table, from, to] of COLUMNS) {
    await q(`ALTER TABLE ${table} RENAME COLUMN ${from} TO ${to}`);
    await q(`DO $$ BEGIN
               IF EXISTS (SELECT 1 FROM pg_constraint WHERE conname = '${table}_${from}_check') THEN
                 ALTER TABLE ${table} RENAME CONSTRAINT ${table}_${from}_check TO ${table}_${to}_check;
               END IF;
             END $$`);
  }
  await q(`ALTER INDEX loggers_sort_track_idx RENAME TO loggers_sort_channel_idx`);

  await renameWords(sequelize, transaction, ACTIONS, (a, b) => `UPDATE release_transitions SET action = '${b}' WHERE action = '${a}'`);
  await renameWords(sequelize, transaction, STATES, (a, b) =>
    `UPDATE release_transitions SET from_state = CASE WHEN from_state = '${a}' THEN '${b}' ELSE from_state END,
                                    to_state = CASE WHEN to_state = '${a}' THEN '${b}' ELSE to_state END
      WHERE from_state = '${a}' OR to_state = '${a}'`);

  // Who stopped a stopped release, and the figures a trip judged.
  await q(`ALTER TABLE releases ADD COLUMN stopped_by text CHECK (stopped_by IN ('person', 'trip')),
                                ADD COLUMN trip_figures jsonb`);
  // Only where the stop still stands: a resume clears who stopped the release, a withdrawal keeps it.
  await q(`UPDATE releases r SET stopped_by = CASE WHEN last.actor_type = 'system' THEN 'trip' ELSE 'person' END
             FROM (SELECT DISTINCT ON (release_id) release_id, actor_type FROM release_transitions
                    WHERE action = 'stop' ORDER BY release_id, at DESC, id DESC) last
            WHERE last.release_id = r.id AND r.stopped_at IS NOT NULL
              AND NOT EXISTS (SELECT 1 FROM release_transitions x WHERE x.release_id = r.id AND x.action = 'resume'
                                 AND (x.at, x.id) > (SELECT max(y.at), max(y.id) FROM release_transitions y WHERE y.release_id = r.id AND y.action = 'stop'))`);

  await renameWords(sequelize, transaction, ACTIVITY, (a, b) => `UPDATE activity SET action = '${b}' WHERE action = '${a}'`);
  await q(`UPDATE activity SET action = 'release.stopped', details = COALESCE(details, '{}'::jsonb) || '{"by": "person"}'::jsonb WHERE action = 'release.halt'`);
  await q(`UPDATE activity SET details = COALESCE(details, '{}'::jsonb) || '{"by": "trip"}'::jsonb WHERE action = 'release.halted'`);
  await q(`UPDATE activity SET action = 'release.stopped' WHERE action = 'release.halted'`);
}

export async function down(sequelize: Sequelize, transaction: Transaction) {
  const q = (sql: string) => sequelize.query(sql, { transaction });
  await q(`UPDATE activity SET action = CASE WHEN details->>'by' = 'trip' THEN 'release.halted' ELSE 'release.halt' END,
                               details = details - 'by'
            WHERE action = 'release.stopped'`);
  await renameWords(sequelize, transaction, ACTIVITY, (a, b) => `UPDATE activity SET action = '${a}' WHERE action = '${b}'`);
  await q(`ALTER TABLE releases DROP COLUMN trip_figures, DROP COLUMN stopped_by`);
  await renameWords(sequelize, transaction, STATES, (a, b) =>
    `UPDATE release_transitions SET from_state = CASE WHEN from_state = '${b}' THEN '${a}' ELSE from_state END,
                                    to_state = CASE WHEN to_state = '${b}' THEN '${a}' ELSE to_state END
      WHERE from_state = '${b}' OR to_state = '${b}'`);
  await renameWords(sequelize, transaction, ACTIONS, (a, b) => `UPDATE release_transitions SET action = '${a}' WHERE action = '${b}'`);
  await q(`ALTER INDEX loggers_sort_channel_idx RENAME TO loggers_sort_track_idx`);
  for (const [table, from, to] of [...COLUMNS].reverse()) {
    await q(`ALTER TABLE ${table} RENAME COLUMN ${to} TO ${from}`);
    await q(`DO $$ BEGIN
               IF EXISTS (SELECT 1 FROM pg_constraint WHERE conname = '${table}_${to}_check') THEN
                 ALTER TABLE ${table} RENAME CONSTRAINT ${table}_${to}_check TO ${table}_${from}_check;
               END IF;
             END $$`);
  }
  await q(`ALTER TABLE releases DROP CONSTRAINT releases_state_check, DROP CONSTRAINT releases_resume_state_check`);
  await renameWords(sequelize, transaction, STATES, (a, b) =>
    `UPDATE releases SET state = CASE WHEN state = '${b}' THEN '${a}' ELSE state END,
                         resume_state = CASE WHEN resume_state = '${b}' THEN '${a}' ELSE resume_state END
      WHERE state = '${b}' OR resume_state = '${b}'`);
  await q(`ALTER TABLE releases ADD CONSTRAINT releases_state_check CHECK (state IN (${stateList(OLD_STATES)})),
                                ADD CONSTRAINT releases_resume_state_check CHECK (resume_state IN (${stateList(OLD_RESUME)}))`);
}
