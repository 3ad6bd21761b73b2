// A draft's targeting: which boards, which versions it upgrades, pilot sites, daylight window and
// the trip points. Saved with PATCH while the release is a draft; "Start pilot" saves first.
import React from 'react';
import { Text, View } from 'react-native';
import { Button, Card, Field, Notice, Row } from './ui';
import { ChoiceChip, ConfirmDialog, ProblemNotice, Segmented, SwitchRow, type ProblemLike } from './release-controls';
import { QueryView, type QueryState } from './query-state';
import { colors, space, type } from './theme';
import type { Release, ReleaseTargeting, Channel } from '../hooks/releases';

type SiteChoice = { id: string; name: string; customer?: string };

type Props = {
  release: Release;
  sites: QueryState<SiteChoice[]>;
  onSave: (t: ReleaseTargeting) => void;
  onStartPilot: (t: ReleaseTargeting) => void;
  saving?: boolean;
  starting?: boolean;
  saved?: boolean;
  error?: (ProblemLike & { field?: (path: string) => string | undefined }) | null;
  startError?: ProblemLike;
  /** Open while the start-pilot confirmation shows; the screen closes it on success. */
  confirmOpen: boolean;
  onConfirmOpen: (open: boolean) => void;
};

const fieldNames: Record<string, string> = {
  boards: 'Board revisions',
  upgradeFrom: 'Upgrade from',
  pilotSiteIds: 'Pilot sites',
  tripFailureRatio: 'Failure ratio',
  tripMinReports: 'Minimum reports',
  tripResetFactor: 'Reset jump factor (watchdog and brown-out)',
  notes: 'Notes',
  channel: 'Channel',
};

function percentText(ratio: number): string {
  return String(Number((Number(ratio) * 100).toFixed(2)));
}

export function ReleaseTargetingForm({ release, sites, onSave, onStartPilot, saving, starting, saved, error, startError, confirmOpen, onConfirmOpen }: Props) {
  const [boards, setBoards] = React.useState<string[]>(release.boards?.length ? release.boards : release.manifestBoards);
  const [upgradeFrom, setUpgradeFrom] = React.useState(release.upgradeFrom ?? '');
  const [pilotSiteIds, setPilotSiteIds] = React.useState<string[]>(release.pilotSiteIds ?? []);
  const [daylight, setDaylight] = React.useState(Boolean(release.daylightWindow));
  const [ratio, setRatio] = React.useState(percentText(release.tripFailureRatio ?? 0.05));
  const [minReports, setMinReports] = React.useState(String(release.tripMinReports ?? 20));
  const [resetFactor, setResetFactor] = React.useState(String(release.tripResetFactor ?? 2));
  const [notes, setNotes] = React.useState(release.notes ?? '');
  const [channel, setChannel] = React.useState<Channel>(release.channel);
  const [local, setLocal] = React.useState<Record<string, string>>({});

  const toggle = (list: string[], v: string) => (list.includes(v) ? list.filter((x) => x !== v) : [...list, v]);

  /** Checks what the console can check itself; the server checks again (ranges, sites, boards). */
  function collect(): ReleaseTargeting | null {
    const problems: Record<string, string> = {};
    const r = Number(ratio.replace(',', '.'));
    const n = Number(minReports);
    const f = Number(resetFactor.replace(',', '.'));
    if (!boards.length) problems.boards = 'Choose at least one board revision.';
    if (ratio.trim() === '' || !Number.isFinite(r) || r < 0 || r > 100) problems.tripFailureRatio = 'A percentage from 0 to 100.';
    if (minReports.trim() === '' || !Number.isInteger(n) || n < 1) problems.tripMinReports = 'A whole number of reports, 1 or more.';
    if (resetFactor.trim() === '' || !Number.isFinite(f) || f < 1) problems.tripResetFactor = 'A factor of 1 or more, e.g. 2 (twice the usual resets).';
    setLocal(problems);
    if (Object.keys(problems).length) return null;
    return {
      boards,
      upgradeFrom: upgradeFrom.trim() === '' ? null : upgradeFrom.trim(),
      pilotSiteIds,
      daylightWindow: daylight,
      tripFailureRatio: Number((r / 100).toFixed(4)),
      tripMinReports: n,
      tripResetFactor: f,
      notes,
      channel,
    };
  }

  const err = (path: string) => local[path] ?? error?.field?.(path);
  const pilotCount = pilotSiteIds.length;

  return (
    <View style={{ gap: space.lg }} testID="targeting-form">
      <Card>
        <Text role="heading" aria-level={2} style={type.heading}>
          Who gets it
        </Text>
        <View style={{ gap: space.xs }}>
          <Text style={type.label}>Board revisions (from the manifest)</Text>
          <Row wrap>
            {release.manifestBoards.map((b) => (
              <ChoiceChip key={b} label={`Board ${b}`} checked={boards.includes(b)} onToggle={() => setBoards(toggle(boards, b))} />
            ))}
          </Row>
          {err('boards') ? <Text role="alert" style={[type.small, { color: colors.ember }]}>{err('boards')}</Text> : null}
        </View>
        <Field
          label="Upgrade from (semver range, optional)"
          mono
          value={upgradeFrom}
          onChangeText={setUpgradeFrom}
          placeholder=">=2.1.0 <2.4.0"
          autoCapitalize="none"
          autoCorrect={false}
          error={err('upgradeFrom')}
          hint="Empty: any older version. Use a range to route old loggers through a stepping-stone release first."
          testID="upgrade-from"
        />
        <Segmented<Channel>
          label="Channel"
          value={channel}
          onChange={setChannel}
          options={[
            { value: 'stable', label: 'Stable' },
            { value: 'early', label: 'Early' },
          ]}
        />
      </Card>

      <Card>
        <Text role="heading" aria-level={2} style={type.heading}>
          Pilot sites
        </Text>
        <Text style={type.small}>The pilot offers this release only to loggers at these sites. Choose sites someone can reach quickly.</Text>
        <QueryView state={sites} rows={2}>
          {(list) =>
            list.length ? (
              <Row wrap>
                {list.map((s) => (
                  <ChoiceChip key={s.id} label={s.name} checked={pilotSiteIds.includes(s.id)} onToggle={() => setPilotSiteIds(toggle(pilotSiteIds, s.id))} testID={`pilot-site-${s.id}`} />
                ))}
              </Row>
            ) : (
              <Text style={type.body}>No sites yet: add a site before choosing pilot sites.</Text>
            )
          }
        </QueryView>
        {err('pilotSiteIds') ? <Text role="alert" style={[type.small, { color: colors.ember }]}>{err('pilotSiteIds')}</Text> : null}
        {pilotCount === 0 ? <Notice tone="amber" title="No pilot sites chosen" detail="The pilot would offer this release to nobody until you widen it." /> : null}
      </Card>

      <Card>
        <Text role="heading" aria-level={2} style={type.heading}>
          When and when to stop
        </Text>
        <SwitchRow
          label="Daylight window"
          hint="Offer only from 1 h after sunrise to 1 h before sunset at the logger's site, when the panel keeps the supply up."
          value={daylight}
          onChange={setDaylight}
          testID="daylight-window"
        />
        <Field label="Trip when more than this share of installs fail (%)" keyboardType="decimal-pad" value={ratio} onChangeText={setRatio} error={err('tripFailureRatio')} hint="Of the install reports received; default 5 %." testID="stop-ratio" />
        <Field label="…once at least this many reports are in" keyboardType="number-pad" value={minReports} onChangeText={setMinReports} error={err('tripMinReports')} hint="Default 20, so one early failure does not stop a rollout." testID="stop-min-reports" />
        <Field
          label="Reset jump factor (watchdog and brown-out)"
          keyboardType="decimal-pad"
          value={resetFactor}
          onChangeText={setResetFactor}
          error={err('tripResetFactor')}
          hint="Trip when loggers on this release have watchdog and brown-out resets this many times more often than before; default 2."
          testID="trip-reset-factor"
        />
      </Card>

      <Card>
        <Field label="Release notes (Markdown)" multiline value={notes} onChangeText={setNotes} style={{ minHeight: 120, paddingVertical: space.sm, textAlignVertical: 'top' }} error={err('notes')} />
      </Card>

      <ProblemNotice error={error} fieldNames={fieldNames} />
      {saved && !error ? <Notice tone="moss" title="Draft saved" detail="The targeting is stored; start the pilot when you are ready." /> : null}

      <Row wrap style={{ justifyContent: 'flex-end' }}>
        <Button label="Save draft" variant="secondary" busy={saving} onPress={() => { const t = collect(); if (t) onSave(t); }} testID="save-draft" />
        <Button label="Start pilot" busy={starting} onPress={() => { if (collect()) onConfirmOpen(true); }} testID="start-pilot" />
      </Row>

      <ConfirmDialog
        visible={confirmOpen}
        title={`Start the pilot of ${release.version}`}
        confirmLabel="Start pilot"
        busy={starting}
        error={startError}
        onCancel={() => onConfirmOpen(false)}
        onConfirm={() => {
          const t = collect();
          if (t) onStartPilot(t);
        }}
        testID="confirm-start-pilot"
      >
        <Text style={type.body}>
          {pilotCount === 0
            ? 'No pilot sites are chosen, so the pilot offers this release to nobody until you widen it.'
            : `Loggers on board ${boards.join(', ')} at ${pilotCount} pilot ${pilotCount === 1 ? 'site' : 'sites'} are offered ${release.version} at their next check-in.`}
        </Text>
        <Text style={type.small}>A failed install can leave a logger offline until someone visits. The supply guard holds back loggers whose supply is low; the targeting cannot be changed after the pilot starts.</Text>
      </ConfirmDialog>
    </View>
  );
}
