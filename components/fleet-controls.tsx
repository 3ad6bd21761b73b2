// Small controls the fleet views share: a labelled select (a plain <select> on the web — keyboard- and
// test-friendly, 44 px high — chips elsewhere), a download link for CSV exports, flag and update-state
// badges (colour + word), and a pager with 25/50/100 per page.
import React from 'react';
import { Linking, Platform, Pressable, Text, View } from 'react-native';
import { Badge, Button, Row } from './ui';
import { Choices } from './choice';
import { colors, fonts, radii, space, touchTarget, type, type Tone } from './theme';
import type { FleetFlag, UpdateState } from '../schemas/fleet';
import { UPDATE_STATES } from '../schemas/words';
import { FLAG_WORDS, UPDATE_STATE_WORDS } from './words';

export type Option = { value: string; label: string };

export function Select({ label, value, options, onChange, anyLabel = 'Any', testID }: { label: string; value: string | undefined; options: Option[]; onChange: (v: string | undefined) => void; anyLabel?: string; testID?: string }) {
  const id = React.useId();
  if (Platform.OS !== 'web') {
    return <Choices label={label} choices={[{ value: '', label: anyLabel }, ...options]} value={value ?? ''} onChange={(v) => onChange(v || undefined)} testID={testID} />;
  }
  return (
    <View style={{ gap: space.xs, minWidth: 140, flexGrow: 1, flexBasis: 160 }}>
      <Text nativeID={`${id}-label`} style={type.label}>
        {label}
      </Text>
      <select
        aria-labelledby={`${id}-label`}
        data-testid={testID}
        value={value ?? ''}
        onChange={(e) => onChange(e.currentTarget.value || undefined)}
        style={{
          minHeight: touchTarget,
          borderRadius: radii.md,
          border: `1px solid ${colors.line}`,
          background: colors.surface,
          color: colors.ink,
          fontFamily: fonts.regular,
          fontSize: 15,
          padding: `0 ${space.sm}px`,
        }}
      >
        <option value="">{anyLabel}</option>
        {options.map((o) => (
          <option key={o.value} value={o.value}>
            {o.label}
          </option>
        ))}
      </select>
    </View>
  );
}

/** A link that downloads a CSV from the API with the session cookie (a plain link on the web). */
export function DownloadLink({ href, label, testID }: { href: string; label: string; testID?: string }) {
  if (Platform.OS !== 'web') return <Button label={label} variant="secondary" onPress={() => Linking.openURL(href)} testID={testID} />;
  return (
    <a
      href={href}
      download
      data-testid={testID}
      style={{
        display: 'inline-flex',
        alignItems: 'center',
        minHeight: touchTarget,
        padding: `0 ${space.lg}px`,
        borderRadius: radii.md,
        border: `1px solid ${colors.line}`,
        background: colors.surface,
        color: colors.ink,
        fontFamily: fonts.semibold,
        fontSize: 15,
        textDecoration: 'none',
        boxSizing: 'border-box',
      }}
    >
      {label}
    </a>
  );
}



export function FlagBadges({ flags }: { flags: FleetFlag[] }) {
  if (!flags.length) return <Text style={type.small}>—</Text>;
  return (
    <Row wrap gap={space.xs}>
      {flags.map((f) => (
        <Badge key={f} label={FLAG_WORDS[f].label} tone={FLAG_WORDS[f].tone} />
      ))}
    </Row>
  );
}

export const UPDATE_STATE_LABELS = Object.fromEntries(UPDATE_STATES.map((s) => [s, UPDATE_STATE_WORDS[s].label])) as Record<UpdateState, string>;

export function UpdateStateBadge({ state }: { state: UpdateState }) {
  return <Badge label={UPDATE_STATE_WORDS[state].label} tone={UPDATE_STATE_WORDS[state].tone} />;
}

/** "Last seen 5 min ago" with the absolute time on hover (title) and on press (toggles). */
export function SeenAt({ at, relative, absolute }: { at: string | null; relative: string; absolute: string }) {
  const [showAbsolute, setShowAbsolute] = React.useState(false);
  if (!at) return <Text style={type.dense}>never</Text>;
  return (
    <Pressable onPress={() => setShowAbsolute((v) => !v)} aria-label={`Last seen ${absolute}`} style={{ minHeight: 24, justifyContent: 'center' }}>
      {/* title: the browser shows the absolute time on hover */}
      <Text style={[type.dense, { fontVariant: ['tabular-nums'] }]} {...(Platform.OS === 'web' ? ({ title: absolute } as object) : {})}>
        {showAbsolute ? absolute : relative}
      </Text>
    </Pressable>
  );
}

/**
 * A count as the console says it: exact as it is, or — when the server answers the database's estimate
 * (totalIsEstimate) — rounded to two figures with its thousands grouped, "about 100 000".
 */
export function countText(total: number, estimate = false): string {
  if (!estimate || total < 100) return String(total);
  const step = 10 ** (Math.floor(Math.log10(total)) - 1);
  return `about ${String(Math.round(total / step) * step).replace(/\B(?=(\d{3})+(?!\d))/g, '\u00a0')}`;
}

export function Pager({
  total,
  totalIsEstimate = false,
  page,
  pageSize,
  onPage,
  onPageSize,
  wide,
}: {
  total: number;
  /** The total is the database's estimate: the range and the page count say "about". */
  totalIsEstimate?: boolean;
  page: number;
  pageSize: number;
  onPage: (p: number) => void;
  onPageSize?: (n: 25 | 50 | 100) => void;
  wide: boolean;
}) {
  const pages = Math.max(1, Math.ceil(total / pageSize));
  const from = total === 0 ? 0 : (page - 1) * pageSize + 1;
  const to = totalIsEstimate ? page * pageSize : Math.min(total, page * pageSize);
  return (
    <Row wrap gap={space.sm} style={{ justifyContent: 'space-between' }}>
      <Text style={[type.small, { fontVariant: ['tabular-nums'] }]} testID="pager-range">
        {from}–{to} of {countText(total, totalIsEstimate)}
      </Text>
      <Row wrap gap={space.sm}>
        {wide && onPageSize ? <Choices label={undefined} choices={[25, 50, 100].map((n) => ({ value: n, label: `${n} per page` }))} value={pageSize} onChange={(n) => onPageSize(n as 25 | 50 | 100)} /> : null}
        <Button label="Previous" variant="secondary" disabled={page <= 1} onPress={() => onPage(page - 1)} />
        <Text style={[type.small, { fontVariant: ['tabular-nums'] }]}>
          {page} / {countText(pages, totalIsEstimate)}
        </Text>
        <Button label="Next" variant="secondary" disabled={page >= pages} onPress={() => onPage(page + 1)} />
      </Row>
    </Row>
  );
}
