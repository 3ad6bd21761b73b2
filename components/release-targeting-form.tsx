// A draft's targeting: which boards, which versions it upgrades, pilot sites, daylight window and
// the trip points. Saved with PATCH while the release is a draft; "Start pilot" saves first.
import React from 'react';
import { Text, View } from 'react-native';
import { useController } from 'react-hook-form';
import { z } from 'zod';
import { Button, Card, Notice, Row } from './ui';
import { decimal, decimalText, FieldMessage, FormField, toggled, useSchemaForm, useServerErrors, whenValid } from './form';
import { ChoiceChip, ConfirmDialog, ProblemNotice, Segmented, SwitchRow, type ProblemLike } from './release-controls';
import { QueryView, type QueryState } from './query-state';
import { space, type } from './theme';
import type { Release, ReleaseTargeting, Channel } from '../hooks/releases';
import { patchReleaseRequest } from '../schemas/releases';
import { DRIFT_TRIP_POINTS } from '../schemas/words';

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
  tripDriftEnergy: 'Energy drift',
  tripDriftTempC: 'Temperature drift',
  tripDriftFlagged: 'Flagged readings drift',
  notes: 'Notes',
  channel: 'Channel',
};

function percentText(ratio: number): string {
  return String(Number((Number(ratio) * 100).toFixed(2)));
}

const shape = patchReleaseRequest.shape;
const tripRatio = shape.tripFailureRatio.unwrap();

/**
 * The failure ratio is typed as a percentage: the shared rule checks the fraction the API takes, and
 * its bounds are said in percent (a fraction's wording would confuse on a percentage field).
 */
const percentOf = (rule: z.ZodNumber) =>
  z.string().transform((text, ctx) => {
    const percent = decimal(text);
    const checked = rule.safeParse(percent === undefined ? undefined : Number((percent / 100).toFixed(4)));
    if (checked.success) return checked.data;
    ctx.addIssue({ code: 'custom', message: `must be a percentage from ${Number(((rule.minValue ?? 0) * 100).toFixed(2))} to ${(rule.maxValue ?? 1) * 100}` });
    return z.NEVER;
  });
const percentOfTripRatio = percentOf(tripRatio);

/** The draft's targeting as the form holds it: the trip points as typed text, each checked by its shared rule. */
const targetingForm = patchReleaseRequest.extend({
  tripFailureRatio: percentOfTripRatio,
  tripMinReports: decimalText().pipe(shape.tripMinReports.unwrap()),
  tripResetFactor: decimalText().pipe(shape.tripResetFactor.unwrap()),
  // The drift trip points: energy and flagged share typed as percentages, temperature in °C.
  tripDriftEnergy: percentOf(shape.tripDriftEnergy.unwrap()),
  tripDriftTempC: decimalText().pipe(shape.tripDriftTempC.unwrap()),
  tripDriftFlagged: percentOf(shape.tripDriftFlagged.unwrap()),
});

export function ReleaseTargetingForm({ release, sites, onSave, onStartPilot, saving, starting, saved, error, startError, confirmOpen, onConfirmOpen }: Props) {
  const form = useSchemaForm(targetingForm, {
    defaultValues: {
      boards: release.boards?.length ? release.boards : release.manifestBoards,
      upgradeFrom: release.upgradeFrom ?? '',
      pilotSiteIds: release.pilotSiteIds ?? [],
      daylightWindow: Boolean(release.daylightWindow),
      tripFailureRatio: percentText(release.tripFailureRatio ?? 0.05),
      tripMinReports: String(release.tripMinReports ?? 20),
      tripResetFactor: String(release.tripResetFactor ?? 2),
      tripDriftEnergy: percentText(release.tripDriftEnergy ?? DRIFT_TRIP_POINTS.tripDriftEnergy),
      tripDriftTempC: String(release.tripDriftTempC ?? DRIFT_TRIP_POINTS.tripDriftTempC),
      tripDriftFlagged: percentText(release.tripDriftFlagged ?? DRIFT_TRIP_POINTS.tripDriftFlagged),
      notes: release.notes ?? '',
      channel: release.channel,
    },
  });
  const { control } = form;
  useServerErrors(form, error);
  const boards = useController({ control, name: 'boards' }).field;
  const pilotSites = useController({ control, name: 'pilotSiteIds' }).field;
  const channel = useController({ control, name: 'channel' }).field;
  const daylight = useController({ control, name: 'daylightWindow' }).field;
  const chosenBoards = (boards.value ?? []) as string[];
  const chosenSites = (pilotSites.value ?? []) as string[];

  const pilotCount = chosenSites.length;

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
              <ChoiceChip key={b} label={`Board ${b}`} checked={chosenBoards.includes(b)} onToggle={() => boards.onChange(toggled(chosenBoards, b))} />
            ))}
          </Row>
          <FieldMessage control={control} name="boards" />
        </View>
        <FormField
          control={control}
          name="upgradeFrom"
          label="Upgrade from (semver range, optional)"
          mono
          placeholder=">=2.1.0 <2.4.0"
          autoCapitalize="none"
          autoCorrect={false}
          hint="Empty: any older version. Use a range to route old loggers through a stepping-stone release first."
          testID="upgrade-from"
        />
        <Segmented<Channel>
          label="Channel"
          value={channel.value as Channel}
          onChange={channel.onChange}
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
                  <ChoiceChip key={s.id} label={s.name} checked={chosenSites.includes(s.id)} onToggle={() => pilotSites.onChange(toggled(chosenSites, s.id))} testID={`pilot-site-${s.id}`} />
                ))}
              </Row>
            ) : (
              <Text style={type.body}>No sites yet: add a site before choosing pilot sites.</Text>
            )
          }
        </QueryView>
        <FieldMessage control={control} name="pilotSiteIds" />
        {pilotCount === 0 ? <Notice tone="amber" title="No pilot sites chosen" detail="The pilot would offer this release to nobody until you widen it." /> : null}
      </Card>

      <Card>
        <Text role="heading" aria-level={2} style={type.heading}>
          When and when to stop
        </Text>
        <SwitchRow
          label="Daylight window"
          hint="Offer only from 1 h after sunrise to 1 h before sunset at the logger's site, when the panel keeps the supply up."
          value={Boolean(daylight.value)}
          onChange={daylight.onChange}
          testID="daylight-window"
        />
        <FormField control={control} name="tripFailureRatio" label="Trip when more than this share of installs fail (%)" keyboardType="decimal-pad" hint="Of the install reports received; default 5 %." testID="stop-ratio" />
        <FormField control={control} name="tripMinReports" label="…once at least this many reports are in" keyboardType="number-pad" hint="Default 20, so one early failure does not stop a rollout." testID="stop-min-reports" />
        <FormField
          control={control}
          name="tripResetFactor"
          label="Reset jump factor (watchdog and brown-out)"
          keyboardType="decimal-pad"
          hint="Trip when loggers on this release have watchdog and brown-out resets this many times more often than before; default 2."
          testID="trip-reset-factor"
        />
        <Text style={type.small}>
          Measurement drift: loggers that installed this release are compared, whole days after against the days before, with the loggers at their sites that did not (so the weather
          cancels out). Trip when the median of at least 20 loggers moves by more than:
        </Text>
        <FormField control={control} name="tripDriftEnergy" label="Daily energy against the clear-sky model (%)" keyboardType="decimal-pad" hint={`Either way; default ${DRIFT_TRIP_POINTS.tripDriftEnergy * 100} %.`} testID="trip-drift-energy" />
        <FormField control={control} name="tripDriftTempC" label="Probe temperature above the expected air temperature (°C)" keyboardType="decimal-pad" hint={`Either way; default ${DRIFT_TRIP_POINTS.tripDriftTempC} °C.`} testID="trip-drift-temp" />
        <FormField control={control} name="tripDriftFlagged" label="Share of flagged probe readings (percentage points)" keyboardType="decimal-pad" hint={`Rising; default ${DRIFT_TRIP_POINTS.tripDriftFlagged * 100} points.`} testID="trip-drift-flagged" />
      </Card>

      <Card>
        <FormField control={control} name="notes" label="Release notes (Markdown)" multiline style={{ minHeight: 120, paddingVertical: space.sm, textAlignVertical: 'top' }} />
      </Card>

      <ProblemNotice error={error} fieldNames={fieldNames} />
      {saved && !error ? <Notice tone="moss" title="Draft saved" detail="The targeting is stored; start the pilot when you are ready." /> : null}

      <Row wrap style={{ justifyContent: 'flex-end' }}>
        <Button label="Save draft" variant="secondary" busy={saving} onPress={whenValid(form, onSave)} testID="save-draft" />
        <Button label="Start pilot" busy={starting} onPress={whenValid(form, () => onConfirmOpen(true))} testID="start-pilot" />
      </Row>

      <ConfirmDialog
        visible={confirmOpen}
        title={`Start the pilot of ${release.version}`}
        confirmLabel="Start pilot"
        busy={starting}
        error={startError}
        onCancel={() => onConfirmOpen(false)}
        onConfirm={whenValid(form, onStartPilot)}
        testID="confirm-start-pilot"
      >
        <Text style={type.body}>
          {pilotCount === 0
            ? 'No pilot sites are chosen, so the pilot offers this release to nobody until you widen it.'
            : `Loggers on board ${chosenBoards.join(', ')} at ${pilotCount} pilot ${pilotCount === 1 ? 'site' : 'sites'} are offered ${release.version} at their next check-in.`}
        </Text>
        <Text style={type.small}>A failed install can leave a logger offline until someone visits. The supply guard holds back loggers whose supply is low; the targeting cannot be changed after the pilot starts.</Text>
      </ConfirmDialog>
    </View>
  );
}
