// Changing an enrolled logger's measurement profile: the same live calculation as at enrollment; the
// server stores a new version and the logger receives it at its next check-in.
import React from 'react';
import { Text, View } from 'react-native';
import { z } from 'zod';
import { Button, Notice, Row } from './ui';
import { WiringCautions, vocCoeffField } from './wiring-cautions';
import { CalibrationPreview, liveProfile, withProfileCheck } from './calibration-preview';
import { decimal, FormChoices, FormField, formSchema, useSchemaForm, useServerErrors, whenValid } from './form';
import { colors, space, type } from './theme';
import type { ApiError } from '../hooks/api';
import type { Profile, ProfileInput } from '../hooks/loggers';
import { profileChangeRequest } from '../schemas/loggers';
import type { ModelLimits, ProfileError } from '../lib/calibration';
import { probeStepChoice } from '../lib/calibration';

const trimmed = (x: number) => String(Number(x.toPrecision(12)));

/** What the form holds: the profile's figures as typed, the shunt in mΩ as marked on the part. */
const profileFields = z.object({
  panelWp: z.string(),
  panelVocV: z.string(),
  vocTempCoeffPctPerC: z.string(),
  shuntOhm: z.string(),
  maxCurrentA: z.string(),
  tempResolutionBits: z.number(),
});

/** The figures as typed in the units of the API. */
function inProfileUnits({ panelWp, panelVocV, vocTempCoeffPctPerC, shuntOhm, maxCurrentA, tempResolutionBits }: z.infer<typeof profileFields>) {
  const milliOhm = decimal(shuntOhm);
  return {
    panelWp: decimal(panelWp),
    panelVocV: decimal(panelVocV),
    vocTempCoeffPctPerC: decimal(vocTempCoeffPctPerC, null),
    shuntOhm: milliOhm === undefined ? undefined : Number((milliOhm / 1000).toPrecision(12)),
    maxCurrentA: decimal(maxCurrentA),
    tempResolutionBits,
  };
}

/** The typed figures as a profile change, checked by its shared schema. */
const profileForm = formSchema(profileFields.transform(inProfileUnits), profileChangeRequest);

export function ProfileForm({
  current,
  limits,
  vocTempCoeffPctPerC,
  siteMinTempC,
  busy,
  error,
  onSave,
  onCancel,
}: {
  current: Profile;
  limits: ModelLimits;
  /** The coefficient given at enrollment, if any. */
  vocTempCoeffPctPerC?: number | null;
  /** The logger's site's lowest expected temperature, °C, if known. */
  siteMinTempC?: number | null;
  busy: boolean;
  error: unknown;
  onSave: (input: ProfileInput) => void;
  onCancel: () => void;
}) {
  const schema = React.useMemo(() => withProfileCheck(profileForm, limits, siteMinTempC), [limits, siteMinTempC]);
  const form = useSchemaForm(schema, {
    defaultValues: {
      panelWp: current.panelWp != null ? trimmed(current.panelWp) : '',
      panelVocV: current.panelVocV != null ? trimmed(current.panelVocV) : '',
      vocTempCoeffPctPerC: vocTempCoeffPctPerC != null ? trimmed(vocTempCoeffPctPerC) : '',
      shuntOhm: trimmed(current.shuntOhm * 1000),
      maxCurrentA: trimmed(current.maxCurrentA),
      tempResolutionBits: current.tempResolutionBits,
    },
  });
  const { control } = form;
  const server = error as ApiError | null;
  useServerErrors(form, server);
  const typed = form.watch();
  const result = liveProfile({ ...inProfileUnits(typed), siteMinTempC }, limits);
  const filled = (path: ProfileError['path']) => path === 'tempResolutionBits' || typed[path].trim() !== '';
  // The profile's own figures are sent, as the server computes them from the same function.
  const save = whenValid(form, (change) => {
    const computed = liveProfile({ ...change, siteMinTempC }, limits);
    if (!computed?.ok) return;
    const { shuntOhm, maxCurrentA, tempResolutionBits } = computed.profile;
    onSave({ ...change, shuntOhm, maxCurrentA, tempResolutionBits });
  });

  return (
    <View style={{ gap: space.md }}>
      <WiringCautions limits={limits} title="Before you change the wiring" />
      <Row gap={space.sm} style={{ alignItems: 'flex-start' }}>
        <View style={{ flex: 1 }}>
          <FormField control={control} name="panelWp" label="Panel rating (Wp)" inputMode="decimal" />
        </View>
        <View style={{ flex: 1 }}>
          <FormField control={control} name="panelVocV" label="Open-circuit voltage (V)" inputMode="decimal" />
        </View>
      </Row>
      <FormField
        control={control}
        name="vocTempCoeffPctPerC"
        {...vocCoeffField}
      />
      <Row gap={space.sm} style={{ alignItems: 'flex-start' }}>
        <View style={{ flex: 1 }}>
          <FormField control={control} name="shuntOhm" label="Shunt resistance (mΩ)" inputMode="decimal" testID="profile-shunt" />
        </View>
        <View style={{ flex: 1 }}>
          <FormField control={control} name="maxCurrentA" label="Maximum expected current (A)" inputMode="decimal" />
        </View>
      </Row>
      <FormChoices
        control={control}
        name="tempResolutionBits"
        label="Temperature probe resolution"
        choices={[...limits.tempResolutions].sort((a, b) => a - b).map((b) => ({ value: b, label: probeStepChoice(b) }))}
      />
      <CalibrationPreview result={result} filled={filled} />
      {server && !server.fieldErrors?.length ? <Notice title={server.title} detail={server.detail} /> : null}
      <Text style={[type.small, { color: colors.inkSoft }]}>Saving makes version {current.version + 1}; the logger picks it up at its next check-in.</Text>
      <Row gap={space.sm} wrap>
        <Button
          label="Save new profile"
          disabled={!result?.ok}
          busy={busy}
          onPress={save}
          testID="profile-save"
        />
        <Button label="Cancel" variant="secondary" onPress={onCancel} />
      </Row>
    </View>
  );
}
