// What the console calls a person's status and each team activity event: one Record per list, so a new
// value is a compile error here until it has its words (the same shape as the other word tables).
import type { Tone } from './theme';
import type { PersonStatus } from '../schemas/team';
import type { TeamActivityAction } from '../schemas/words';

export const PERSON_STATUS_WORDS: Record<PersonStatus, { label: string; tone: Tone }> = {
  invited: { label: 'Invited', tone: 'slate' },
  active: { label: 'Active', tone: 'moss' },
  disabled: { label: 'Disabled', tone: 'ink' },
};

/** A few words per team event, for filters and headings; each activity row also carries its own sentence. */
export const TEAM_ACTIVITY_WORDS: Record<TeamActivityAction, string> = {
  'person.invited': 'Invited',
  'person.invitation_resent': 'Invitation sent again',
  'person.invitation_revoked': 'Invitation revoked',
  'person.joined': 'Joined the team',
  'person.role_changed': 'Role changed',
  'person.disabled': 'Disabled',
  'person.enabled': 'Enabled again',
  'person.renamed': 'Name changed',
  'person.password_reset_requested': 'Password reset asked for',
  'person.password_reset': 'Password reset',
  'person.password_changed': 'Password changed',
  'person.second_factor_on': 'Second factor on',
  'person.second_factor_off': 'Second factor off',
  'person.recovery_code_used': 'Recovery code used',
  'person.signed_out': 'Signed out',
  'person.sessions_revoked': 'Signed out everywhere',
};
