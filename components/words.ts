// What the console calls each domain value, and its colour: one Record per list of schemas/words.ts,
// so a new state, reason or flag is a compile error here until it has its word. Status is always a
// word with its colour, never colour alone (docs/DESIGN.md). Tones: moss = as planned, slate = waiting or
// under way, amber = needs a look, ember = something went wrong, ink = over for good.
import type { Tone } from './theme';
import type { PersonStatus } from '../schemas/team';
import type {
  ActivityAction,
  Channel,
  FailureReason,
  FleetFlag,
  LaggingReason,
  LoggerStatus,
  ReleaseAction,
  ReleaseState,
  UpdateState,
} from '../schemas/words';

export type Word = { label: string; tone: Tone };

export const RELEASE_STATE_WORDS: Record<ReleaseState, Word> = {
  draft: { label: 'Draft', tone: 'slate' },
  pilot: { label: 'Pilot', tone: 'slate' },
  widening: { label: 'Widening', tone: 'moss' },
  complete: { label: 'Complete', tone: 'moss' },
  paused: { label: 'Paused', tone: 'amber' },
  stopped: { label: 'Stopped', tone: 'ember' },
  withdrawn: { label: 'Withdrawn', tone: 'ink' },
};

/** A release's history, one past-tense word per step (an upload, then each action). */
export const RELEASE_STEP_WORDS: Record<ReleaseAction | 'upload', string> = {
  upload: 'Uploaded',
  start_pilot: 'Started the pilot',
  widen: 'Widened',
  complete: 'Completed',
  pause: 'Paused',
  resume: 'Resumed',
  stop: 'Stopped',
  withdraw: 'Withdrew',
};

/** The button word of each action (shared with the server's refusals). */
export { RELEASE_ACTION_WORDS } from '../schemas/words';

export const CHANNEL_WORDS: Record<Channel, Word> = {
  stable: { label: 'Stable channel', tone: 'ink' },
  early: { label: 'Early channel', tone: 'amber' },
};

export const FAILURE_REASON_WORDS: Record<FailureReason, string> = {
  integrity: 'Image did not match its digest',
  signature: 'Signature refused by the logger',
  storage: 'Not enough storage on the logger',
  connection: 'Connection lost during download',
  unsupported: 'Image refused by the logger as unsupported',
  low_supply: 'Low supply during the install',
  other: 'Other',
};

/** Enrolled but no check-in for three intervals: the same words wherever the fact shows. */
export const NOT_HEARD_FROM: Word = { label: 'Not heard from', tone: 'amber' };

export const LOGGER_STATUS_WORDS: Record<LoggerStatus | 'online', Word> = {
  registered: { label: 'Registered', tone: 'slate' },
  enrolled: NOT_HEARD_FROM,
  online: { label: 'Online', tone: 'moss' },
  retired: { label: 'Retired', tone: 'ink' },
};

export const FLAG_WORDS: Record<FleetFlag, Word> = {
  silent: NOT_HEARD_FROM,
  unstable: { label: 'Unstable', tone: 'ember' },
  low_supply: { label: 'Low supply', tone: 'amber' },
  probe_fault: { label: 'Probe fault', tone: 'amber' },
};

export const UPDATE_STATE_WORDS: Record<UpdateState, Word> = {
  up_to_date: { label: 'Up to date', tone: 'moss' },
  offered: { label: 'Offered', tone: 'slate' },
  downloading: { label: 'Downloading', tone: 'slate' },
  downloaded: { label: 'Downloaded', tone: 'slate' },
  installing: { label: 'Installing', tone: 'slate' },
  installed: { label: 'Installed', tone: 'moss' },
  failed: { label: 'Failed', tone: 'ember' },
  behind: { label: 'Behind', tone: 'amber' },
};

/** Short words for the lagging badges; the site view spells each reason out in full. */
export const LAGGING_REASON_WORDS: Record<LaggingReason, Word> = {
  silent: NOT_HEARD_FROM,
  low_supply: { label: 'Low supply', tone: 'amber' },
  board_not_supported: { label: 'Board revision not targeted', tone: 'ink' },
  outside_daylight_window: { label: 'Outside daylight window', tone: 'slate' },
  outside_share: { label: 'Not yet in share', tone: 'slate' },
  not_pilot_site: { label: 'Not a pilot site', tone: 'slate' },
  release_not_live: { label: 'Release stopped or paused', tone: 'amber' },
  failed_awaiting_retry: { label: 'Failed, awaiting retry', tone: 'ember' },
  needs_stepping_stone: { label: 'Needs stepping stone', tone: 'amber' },
  security_counter_too_low: { label: 'Security counter', tone: 'ember' },
  manifest_expired: { label: 'Manifest expired', tone: 'ember' },
  offered: { label: 'Installing', tone: 'moss' },
  other: { label: 'Other', tone: 'ink' },
};

/** A person's standing on the team. */
export const PERSON_STATUS_WORDS: Record<PersonStatus, Word> = {
  invited: { label: 'Invited', tone: 'slate' },
  active: { label: 'Active', tone: 'moss' },
  disabled: { label: 'Disabled', tone: 'ink' },
};

/** What happened, in a few words, for each activity code (the row's summary says the rest). */
export const ACTIVITY_WORDS: Record<ActivityAction, string> = {
  'demo.seeded': 'Demo fleet seeded',
  'person.created': 'Person added',
  'person.signed_in': 'Signed in',
  'key.registered': 'Signing key registered',
  'key.retired': 'Signing key retired',
  'key.revoked': 'Signing key revoked',
  'trust.signature_added': 'Trust set signed by a key',
  'trust.set_signed': 'Trust set ready for loggers',
  'token.created': 'API token created',
  'token.revoked': 'API token revoked',
  'model.created': 'Model added',
  'model.updated': 'Model changed',
  'model.signing_threshold_changed': 'Signing rule changed',
  'site.created': 'Site added',
  'site.updated': 'Site changed',
  'site.note_added': 'Note on a site',
  'logger.registered': 'Logger registered',
  'logger.batch_registered': 'Batch of loggers registered',
  'logger.batch_labels_issued': 'New labels for a batch',
  'logger.enrolled': 'Logger enrolled',
  'logger.moved': 'Logger moved',
  'logger.retired': 'Logger retired',
  'logger.token_rotated': 'Logger token replaced',
  'logger.note_added': 'Note on a logger',
  'logger.photo_added': 'Install photo added',
  'profile.changed': 'Measurement profile changed',
  'release.uploaded': 'Release uploaded',
  'release.edited': 'Release targeting changed',
  'release.deleted': 'Draft release deleted',
  'release.retried': 'Failed installs retried',
  'release.signature_added': 'Release signed by another key',
  'release.resigned': 'Release signed again',
  'release.pilot_started': 'Pilot started',
  'release.widened': 'Release widened',
  'release.completed': 'Release completed',
  'release.paused': 'Release paused',
  'release.resumed': 'Release resumed',
  'release.stopped': 'Release stopped',
  'release.withdrawn': 'Release withdrawn',
  'person.invited': 'Person invited',
  'person.invitation_resent': 'Invitation sent again',
  'person.invitation_revoked': 'Invitation withdrawn',
  'person.joined': 'Person joined the team',
  'person.role_changed': 'Role changed',
  'person.disabled': 'Person disabled',
  'person.enabled': 'Person enabled again',
  'person.renamed': 'Name changed',
  'person.password_reset_requested': 'Password reset asked for',
  'person.password_reset': 'Password reset',
  'person.password_changed': 'Password changed',
  'person.second_factor_on': 'Second factor turned on',
  'person.second_factor_off': 'Second factor turned off',
  'person.recovery_code_used': 'Recovery code used',
  'person.signed_out': 'Signed out',
  'person.sessions_revoked': 'Signed out everywhere',
};

/** The activity word for a code, and the code itself for one this console does not know yet. */
export function activityWord(action: string): string {
  return (ACTIVITY_WORDS as Record<string, string>)[action] ?? action;
}
