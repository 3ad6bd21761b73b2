// A logger's status as a word and a colour (never colour alone): registered → enrolled → online; retired.
import type { Tone } from './theme';

export type StatusInput = { status: 'registered' | 'enrolled' | 'retired'; online?: boolean };

export function loggerStatus({ status, online }: StatusInput): { label: string; tone: Tone } {
  if (status === 'retired') return { label: 'Retired', tone: 'ink' };
  if (status === 'registered') return { label: 'Registered', tone: 'slate' };
  if (online) return { label: 'Online', tone: 'moss' };
  return { label: 'Enrolled', tone: 'amber' };
}
