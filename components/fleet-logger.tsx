// A logger's fleet view: "Why no update?" (the offer decision per release, in plain
// words), supply-voltage and temperature sparklines over 7 days, the timeline newest first with older
// pages on request, and the add-note form for support, release engineers and admins.
import React from 'react';
import { Text, View } from 'react-native';
import { Badge, Button, Card, Mono, Notice, Row, Skeleton } from './ui';
import { FormField, useSchemaForm, useServerErrors, whenValid } from './form';
import { Sparkline } from './charts/lazy';
import { absoluteTime, relativeTime } from './format';
import { SiteTime } from './site-time';
import { colors, fonts, space, type } from './theme';
import { noteRequest, type Note, type Sparklines, type TimelineItem } from '../schemas/fleet';
import type { WhyAnswer } from '../hooks/fleet';

type Q<T> = { data?: T; isPending: boolean; error: Error | null };
const problem = (e: Error | null) => e as (Error & { title?: string; detail?: string }) | null;

export function WhyNoUpdate({ state }: { state: Q<WhyAnswer> }) {
  return (
    <Card testID="why-no-update">
      <Text role="heading" aria-level={2} style={type.heading}>
        Why no update?
      </Text>
      {state.isPending ? (
        <Skeleton rows={2} />
      ) : state.error || !state.data ? (
        <Text style={type.small}>{problem(state.error)?.detail ?? 'The decision could not be read.'}</Text>
      ) : (
        <View style={{ gap: space.sm }}>
          <Text style={type.body}>
            {state.data.offer ? (
              <>
                At its next check-in this logger is offered <Mono>{state.data.offer.version}</Mono>.
              </>
            ) : (
              'At its next check-in this logger is offered nothing; each release below says why.'
            )}
          </Text>
          {state.data.verdicts.length === 0 ? <Text style={type.small}>No release of its model exists yet.</Text> : null}
          {state.data.verdicts.map((v) => (
            <View key={v.releaseId} style={{ borderTopColor: colors.line, borderTopWidth: 1, paddingTop: space.sm, gap: 2 }}>
              <Row wrap style={{ justifyContent: 'space-between' }}>
                <Mono style={{ fontFamily: fonts.monoMedium }}>{v.version}</Mono>
                <Badge label={v.outcome === 'offered' ? 'Offered' : v.label} tone={v.outcome === 'offered' ? 'moss' : 'slate'} />
              </Row>
              <Text style={type.small}>{v.detail}</Text>
            </View>
          ))}
        </View>
      )}
    </Card>
  );
}

export function Readings({ state, days }: { state: Q<Sparklines>; days: number }) {
  const points = state.data?.points ?? [];
  const last = <K extends 'supplyV' | 'tempC'>(k: K) => [...points].reverse().find((p) => p[k] !== null)?.[k] ?? null;
  return (
    <Card>
      <Text role="heading" aria-level={2} style={type.heading}>
        Readings, last {days} days
      </Text>
      {state.isPending ? (
        <Skeleton rows={2} height={48} />
      ) : state.error ? (
        <Text style={type.small}>{problem(state.error)?.detail ?? 'Readings could not be read.'}</Text>
      ) : (
        <Row wrap gap={space.lg} style={{ alignItems: 'flex-start' }}>
          <View style={{ flexGrow: 1, flexBasis: 240, gap: space.xs }}>
            <Text style={type.label}>Supply voltage (hourly){last('supplyV') !== null ? ` · now ${last('supplyV')!.toFixed(2)} V` : ''}</Text>
            <Sparkline values={points.map((p) => p.supplyV)} color={colors.slate} label={`Supply voltage over ${days} days`} />
          </View>
          <View style={{ flexGrow: 1, flexBasis: 240, gap: space.xs }}>
            <Text style={type.label}>Temperature (hourly){last('tempC') !== null ? ` · now ${last('tempC')!.toFixed(1)} °C` : ''}</Text>
            <Sparkline values={points.map((p) => p.tempC)} color={colors.amber} label={`Temperature over ${days} days`} />
          </View>
        </Row>
      )}
    </Card>
  );
}

const RESET_WORDS: Record<string, string> = { watchdog: 'watchdog', brownout: 'brown-out', brown_out: 'brown-out', power_on: 'power-on', software: 'software' };
const resetList = (counts: Record<string, number> | null) =>
  counts
    ? Object.entries(counts)
        .filter(([, n]) => n > 0)
        .map(([k, n]) => `${n} ${RESET_WORDS[k] ?? k.replace(/_/g, ' ')}`)
        .join(', ')
    : '';

function describe(item: TimelineItem): { title: string; detail?: string; tone: 'moss' | 'ember' | 'amber' | 'slate' | 'ink'; kind: string } {
  switch (item.kind) {
    case 'check_in': {
      const resets = resetList(item.resets);
      return {
        kind: 'Check-in',
        tone: 'slate',
        title: `Checked in on ${item.firmware}`,
        detail: [item.supplyV !== null ? `supply ${item.supplyV.toFixed(2)} V` : null, item.tempC !== null ? `${item.tempC.toFixed(1)} °C` : null, resets ? `resets: ${resets}` : null].filter(Boolean).join(' · '),
      };
    }
    case 'reset':
      return { kind: 'Reset', tone: 'amber', title: `Reset${item.reason ? `: ${RESET_WORDS[item.reason] ?? item.reason.replace(/_/g, ' ')}` : ''}`, detail: resetList(item.counts) };
    case 'install':
      return {
        kind: 'Install',
        tone: item.state === 'failed' ? 'ember' : item.state === 'installed' ? 'moss' : 'slate',
        title: `${item.version}: ${item.state}${item.reason ? ` (${item.reason.replace(/_/g, ' ')})` : ''}`,
        detail: item.detail ?? undefined,
      };
    case 'activity':
      return { kind: 'Change', tone: 'ink', title: item.summary, detail: `by ${item.actorName}` };
    case 'note':
      return { kind: 'Note', tone: 'moss', title: item.text, detail: `by ${item.authorName}` };
  }
}

export type TimelineState = { pages: { rows: TimelineItem[]; total: number }[]; isPending: boolean; error: Error | null; hasNextPage: boolean; isFetchingNextPage: boolean; fetchNextPage: () => unknown };

/** `timeZone`: the logger's site's zone (lib/site-time.ts); UTC for a logger at no site. */
export function Timeline({ state, timeZone = 'UTC' }: { state: TimelineState; timeZone?: string }) {
  const items = state.pages.flatMap((p) => p.rows);
  const total = state.pages[0]?.total;
  return (
    <Card testID="timeline">
      <Row wrap style={{ justifyContent: 'space-between' }}>
        <Text role="heading" aria-level={2} style={type.heading}>
          Timeline
        </Text>
        {total !== undefined ? <Text style={type.small}>{`${items.length} of ${total}, newest first`}</Text> : null}
      </Row>
      {state.isPending ? (
        <Skeleton rows={5} height={40} />
      ) : state.error && !items.length ? (
        <Notice title={problem(state.error)?.title ?? 'Could not load the timeline'} detail={problem(state.error)?.detail ?? state.error.message} />
      ) : !items.length ? (
        <Text style={type.body}>Nothing has happened to this logger yet.</Text>
      ) : (
        <View role="list">
          {items.map((item, i) => {
            const d = describe(item);
            return (
              <View role="listitem" key={`${item.kind}-${item.at}-${i}`} style={{ flexDirection: 'row', gap: space.md, borderTopColor: colors.line, borderTopWidth: i ? 1 : 0, paddingVertical: space.sm }}>
                <View style={{ width: 84, gap: 2 }}>
                  <Badge label={d.kind} tone={d.tone} />
                </View>
                <View style={{ flex: 1, gap: 2 }}>
                  <Text style={[type.dense, item.kind === 'note' && { fontFamily: fonts.medium }]}>{d.title}</Text>
                  {d.detail ? <Text style={type.small}>{d.detail}</Text> : null}
                  <Text style={type.small}>
                    {relativeTime(item.at)} · <SiteTime at={item.at} timeZone={timeZone} />
                  </Text>
                </View>
              </View>
            );
          })}
        </View>
      )}
      {state.hasNextPage ? (
        <View style={{ alignSelf: 'flex-start' }}>
          <Button label="Show older" variant="secondary" busy={state.isFetchingNextPage} onPress={() => state.fetchNextPage()} testID="timeline-older" />
        </View>
      ) : null}
    </Card>
  );
}

const noteMax = noteRequest.shape.text.maxLength ?? 1000;

/** A short note by support or the team; it joins the timeline (or the site's notes). */
export function NoteForm({ busy, error, onAdd, done }: { busy: boolean; error: Error | null; onAdd: (text: string, clear: () => void) => void; done?: boolean }) {
  const form = useSchemaForm(noteRequest, { defaultValues: { text: '' } });
  useServerErrors(form, error);
  const text = form.watch('text');
  const left = noteMax - text.length;
  return (
    <Card testID="note-form">
      <Text role="heading" aria-level={2} style={type.heading}>
        Add a note
      </Text>
      <FormField
        control={form.control}
        name="text"
        label="Note"
        multiline
        maxLength={noteMax}
        placeholder="Called the site; the panel was shaded by new scaffolding until Friday."
        style={{ minHeight: 88, paddingVertical: space.sm, textAlignVertical: 'top' }}
        hint={`${left} characters left`}
        testID="note-text"
      />
      {error && !(error as { field?: (p: string) => string | undefined }).field?.('text') ? <Notice title={problem(error)?.title ?? 'Not saved'} detail={problem(error)?.detail ?? error.message} /> : null}
      {done ? <Text style={[type.small, { color: colors.moss }]}>Note saved.</Text> : null}
      <View style={{ alignSelf: 'flex-start' }}>
        <Button label="Add note" disabled={!text.trim()} busy={busy} onPress={whenValid(form, (note) => onAdd(note.text, () => form.reset()))} testID="note-add" />
      </View>
    </Card>
  );
}

export type SiteNotesState = {
  pages: { rows: Note[]; total: number }[];
  isPending: boolean;
  error: Error | null;
  refetch: () => unknown;
  hasNextPage: boolean;
  isFetchingNextPage: boolean;
  fetchNextPage: () => unknown;
};

export type NoteWriting = { busy: boolean; error: Error | null; done: boolean; onAdd: (text: string, clear: () => void) => void };

/**
 * Notes on a site, newest first, with older pages on request; the form above them for the roles that
 * may write (`write` given), the list alone for everyone else who may see the site.
 */
/** `timeZone`: the site's zone; notes are dated in it (lib/site-time.ts). */
export function SiteNotes({ state, write, timeZone }: { state: SiteNotesState; write?: NoteWriting; timeZone: string }) {
  const notes = state.pages.flatMap((p) => p.rows);
  const total = state.pages[0]?.total;
  const failure = problem(state.error);
  return (
    <View style={{ gap: space.md }} testID="site-notes">
      {write ? <NoteForm busy={write.busy} error={write.error} onAdd={write.onAdd} done={write.done} /> : null}
      <Card testID="site-notes-list">
        <Row wrap style={{ justifyContent: 'space-between' }}>
          <Text role="heading" aria-level={2} style={type.heading}>
            Notes
          </Text>
          {total ? <Text style={type.small}>{`${notes.length} of ${total}, newest first`}</Text> : null}
        </Row>
        {state.isPending ? (
          <Skeleton rows={3} height={40} />
        ) : failure && !notes.length ? (
          <View style={{ gap: space.sm }}>
            <Notice title={failure.title ?? 'Could not load the notes'} detail={failure.detail ?? failure.message} />
            <View style={{ alignSelf: 'flex-start' }}>
              <Button label="Try again" variant="secondary" onPress={() => state.refetch()} />
            </View>
          </View>
        ) : !notes.length ? (
          <Text style={type.body}>No notes on this site yet.</Text>
        ) : (
          <View role="list">
            {notes.map((n, i) => (
              <View role="listitem" key={n.id} style={{ borderTopColor: colors.line, borderTopWidth: i ? 1 : 0, paddingVertical: space.sm, gap: 2 }}>
                <Text style={type.body}>{n.text}</Text>
                <Text style={type.small}>
                  {n.authorName} · <SiteTime at={n.createdAt} timeZone={timeZone} />
                </Text>
              </View>
            ))}
          </View>
        )}
        {failure && notes.length ? <Notice title={failure.title ?? 'Could not load older notes'} detail={failure.detail ?? failure.message} /> : null}
        {state.hasNextPage && notes.length ? (
          <View style={{ alignSelf: 'flex-start' }}>
            <Button label="Show older notes" variant="secondary" busy={state.isFetchingNextPage} onPress={() => state.fetchNextPage()} testID="site-notes-older" />
          </View>
        ) : null}
      </Card>
    </View>
  );
}
