// Release words and colours: every state is a coloured word, never colour alone (docs/DESIGN.md).
import React from 'react';
import { Text, View } from 'react-native';
import { Badge, ProgressBar } from './ui';
import { space, type, type Tone } from './theme';
import type { ReleaseState, Channel } from '../hooks/releases';
import { RELEASE_STATES } from '../schemas/words';
import { CHANNEL_WORDS, RELEASE_STATE_WORDS } from './words';

/** The release states' words and tones (components/words.ts), as the screens read them. */
export const stateWords = Object.fromEntries(RELEASE_STATES.map((s) => [s, RELEASE_STATE_WORDS[s].label])) as Record<ReleaseState, string>;
export const stateTones = Object.fromEntries(RELEASE_STATES.map((s) => [s, RELEASE_STATE_WORDS[s].tone])) as Record<ReleaseState, Tone>;

export function StateBadge({ state, testID }: { state: ReleaseState; testID?: string }) {
  return <Badge label={stateWords[state] ?? state} tone={stateTones[state] ?? 'slate'} testID={testID} />;
}

export function ChannelBadge({ channel }: { channel: Channel }) {
  return <Badge label={CHANNEL_WORDS[channel].label} tone={CHANNEL_WORDS[channel].tone} />;
}

/** A share in percent as people say it: "25 %", "12.5 %" (numeric columns may arrive as text). */
export function formatShare(share: number | string | null | undefined): string {
  const n = Number(share ?? 0);
  if (!Number.isFinite(n)) return '—';
  return `${Number.isInteger(n) ? n : Number(n.toFixed(2))} %`;
}

/** The rollout share as a bar with its number; a pilot (share 0) reaches its pilot sites only. */
export function ShareBar({ state, share, compact, testID }: { state: ReleaseState; share: number; compact?: boolean; testID?: string }) {
  const n = Number(share ?? 0);
  const caption =
    state === 'draft'
      ? 'Not offered yet'
      : state === 'pilot' || (n === 0 && state !== 'withdrawn')
        ? 'Pilot sites only'
        : state === 'withdrawn'
          ? `Withdrawn at ${formatShare(n)}`
          : `${formatShare(n)} of eligible loggers`;
  return (
    <View testID={testID} style={{ gap: space.xs, minWidth: compact ? 96 : undefined }}>
      <ProgressBar value={n} name="Rollout share" tone={stateTones[state] === 'ink' ? 'slate' : stateTones[state]} />
      <Text style={[type.small, { fontVariant: ['tabular-nums'] }]}>{compact ? (state === 'draft' ? '—' : formatShare(n)) : caption}</Text>
    </View>
  );
}

export function bytes(n: number): string {
  if (n < 1024) return `${n} B`;
  if (n < 1024 * 1024) return `${(n / 1024).toFixed(1)} KiB`;
  return `${(n / 1024 / 1024).toFixed(2)} MiB`;
}
