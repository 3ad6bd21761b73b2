// Changing an enrolled logger's measurement profile: the same live calculation as at enrollment; the
// server stores a new version and the logger receives it at its next check-in.
import React from 'react';
import { Text, View } from 'react-native';
import { Button, Field, Notice, Row } from './ui';
import { Choices } from './choice';
import { CalibrationPreview, liveProfile } from './calibration-preview';
import { colors, space, type } from './theme';
import type { ApiError } from '../hooks/api';
import type { Profile, ProfileInput } from '../hooks/loggers';
import type { InstallForProfile, ModelLimits } from '../lib/calibration';

function parseNumber(text: string): number | undefined {
  const t = text.trim().replace(',', '.');
  if (t === '') return undefined;
  const n = Number(t);
  return Number.isFinite(n) ? n : NaN;
}

const trimmed = (x: number) => String(Number(x.toPrecision(12)));

export function ProfileForm({
  current,
  limits,
  busy,
  error,
  onSave,
  onCancel,
}: {
  current: Profile;
  limits: ModelLimits;
  busy: boolean;
  error: unknown;
  onSave: (input: ProfileInput) => void;
  onCancel: () => void;
}) {
  const [panelWp, setPanelWp] = React.useState(current.panelWp != null ? trimmed(current.panelWp) : '');
  const [panelVocV, setPanelVocV] = React.useState(current.panelVocV != null ? trimmed(current.panelVocV) : '');
  const [shuntMilli, setShuntMilli] = React.useState(trimmed(current.shuntOhm * 1000));
  const [maxCurrentA, setMaxCurrentA] = React.useState(trimmed(current.maxCurrentA));
  const [bits, setBits] = React.useState<number>(current.tempResolutionBits);
  const shunt = parseNumber(shuntMilli);
  const install: Partial<InstallForProfile> = {
    shuntOhm: shunt === undefined ? undefined : Number((shunt / 1000).toPrecision(12)),
    maxCurrentA: parseNumber(maxCurrentA),
    panelVocV: parseNumber(panelVocV),
    tempResolutionBits: bits,
  };
  const result = liveProfile(install, limits);
  const filled = (path: keyof InstallForProfile) => path === 'tempResolutionBits' || ({ shuntOhm: shuntMilli, maxCurrentA, panelVocV }[path].trim() !== '');
  const server = error as ApiError | null;
  const wp = parseNumber(panelWp);

  return (
    <View style={{ gap: space.md }}>
      <Row gap={space.sm} style={{ alignItems: 'flex-start' }}>
        <View style={{ flex: 1 }}>
          <Field label="Panel rating (Wp)" value={panelWp} onChangeText={setPanelWp} inputMode="decimal" error={server?.field?.('panelWp')} />
        </View>
        <View style={{ flex: 1 }}>
          <Field label="Open-circuit voltage (V)" value={panelVocV} onChangeText={setPanelVocV} inputMode="decimal" error={server?.field?.('panelVocV')} />
        </View>
      </Row>
      <Row gap={space.sm} style={{ alignItems: 'flex-start' }}>
        <View style={{ flex: 1 }}>
          <Field label="Shunt resistance (mΩ)" value={shuntMilli} onChangeText={setShuntMilli} inputMode="decimal" error={server?.field?.('shuntOhm')} testID="profile-shunt" />
        </View>
        <View style={{ flex: 1 }}>
          <Field label="Maximum expected current (A)" value={maxCurrentA} onChangeText={setMaxCurrentA} inputMode="decimal" error={server?.field?.('maxCurrentA')} />
        </View>
      </Row>
      <Choices
        label="Temperature probe resolution"
        choices={[...limits.tempResolutions].sort((a, b) => a - b).map((b) => ({ value: b, label: `${b} bits` }))}
        value={bits}
        onChange={setBits}
        error={server?.field?.('tempResolutionBits')}
      />
      <CalibrationPreview result={result} filled={filled} />
      {server && !server.fieldErrors?.length ? <Notice title={server.title} detail={server.detail} /> : null}
      <Text style={[type.small, { color: colors.inkSoft }]}>Saving makes version {current.version + 1}; the logger picks it up at its next check-in.</Text>
      <Row gap={space.sm} wrap>
        <Button
          label="Save new profile"
          disabled={!result?.ok || (wp !== undefined && !(wp > 0))}
          busy={busy}
          onPress={() =>
            result?.ok &&
            onSave({
              panelWp: wp,
              panelVocV: install.panelVocV,
              shuntOhm: result.profile.shuntOhm,
              maxCurrentA: result.profile.maxCurrentA,
              tempResolutionBits: result.profile.tempResolutionBits,
            })
          }
          testID="profile-save"
        />
        <Button label="Cancel" variant="secondary" onPress={onCancel} />
      </Row>
    </View>
  );
}
