// The measurement profile computed live as the integrator types, with the same pure function the
// server uses (lib/calibration.ts), the headroom against the chip's limits, and its refusals.
import React from 'react';
import { StyleSheet, Text, View } from 'react-native';
import type { z } from 'zod';
import { Card, Disclosure, Notice, ProgressBar } from './ui';
import { colors, space, type } from './theme';
import { ABOVE_RATING, measurementProfile, probeStepText, type InstallForProfile, type ModelLimits, type ProfileError, type ProfileResult } from '../lib/calibration';

/** Amps in the unit an installer reads: µA, mA or A, at most 4 significant digits. */
export function formatCurrent(a: number): string {
  if (a < 1e-3) return `${Number((a * 1e6).toPrecision(4))} µA`;
  if (a < 1) return `${Number((a * 1e3).toPrecision(4))} mA`;
  return `${Number(a.toPrecision(4))} A`;
}

export function formatPower(w: number): string {
  if (w < 1) return `${Number((w * 1e3).toPrecision(4))} mW`;
  return `${Number(w.toPrecision(4))} W`;
}

/** Runs the shared calculation; null while there is nothing to compute yet. */
export function liveProfile(install: Partial<InstallForProfile>, limits: ModelLimits): ProfileResult | null {
  if (!install.shuntOhm && !install.maxCurrentA && !install.panelVocV) return null;
  return measurementProfile(
    {
      shuntOhm: install.shuntOhm ?? NaN,
      maxCurrentA: install.maxCurrentA ?? NaN,
      panelVocV: install.panelVocV ?? NaN,
      tempResolutionBits: install.tempResolutionBits ?? NaN,
      vocTempCoeffPctPerC: install.vocTempCoeffPctPerC ?? null,
      siteMinTempC: install.siteMinTempC ?? null,
    },
    limits,
  );
}

/**
 * A form schema that also puts the calculation's refusals (shunt full scale, calibration range, bus
 * limit, probe resolution) on the fields they concern, after the shared schema's own rules.
 */
export function withProfileCheck<S extends z.ZodType<Partial<InstallForProfile>>>(schema: S, limits: ModelLimits, siteMinTempC?: number | null): S {
  return schema.superRefine((install, ctx) => {
    const result = liveProfile({ ...install, siteMinTempC: siteMinTempC ?? null }, limits);
    if (result && !result.ok) for (const e of result.errors) ctx.addIssue({ code: 'custom', path: [e.path], message: e.message });
  });
}

export function CalibrationPreview({ result, filled }: { result: ProfileResult | null; filled: (path: ProfileError['path']) => boolean }) {
  if (!result) {
    return (
      <Card testID="calibration">
        <Text style={type.heading}>Measurement profile</Text>
        <Text style={type.small}>Enter the shunt resistance, maximum current and panel voltage to see the calibration the logger will use.</Text>
      </Card>
    );
  }
  const headroom = result.headroom;
  // Only complain about fields the person has filled in; blank ones are simply still to come.
  const refusals = result.ok ? [] : result.errors.filter((e) => filled(e.path));
  const aboveRating = refusals.some((e) => e.message.startsWith(ABOVE_RATING));
  return (
    <Card testID="calibration" style={result.ok ? { borderColor: colors.moss } : undefined}>
      <Text style={type.heading}>Measurement profile</Text>
      {result.ok ? (
        <>
          <View style={styles.grid}>
            <Value label="Sample every" value={`${result.profile.sampleIntervalS} s`} />
            <Value label="Temperature in" value={probeStepText(result.profile.tempResolutionBits)} />
          </View>
          {/* The register values matter to whoever checks the chip by hand, not to the installer. */}
          <Disclosure label="Details" testID="calibration-details">
            <View style={styles.grid}>
              <Value label="Calibration" value={String(result.profile.calibration)} testID="calibration-value" />
              <Value label="Current step" value={formatCurrent(result.profile.currentLsbA)} />
              <Value label="Power step" value={formatPower(result.profile.powerLsbW)} />
              <Value label="Probe resolution" value={`${result.profile.tempResolutionBits} bits`} />
            </View>
          </Disclosure>
        </>
      ) : (
        <Text style={type.small}>The values appear once every figure is in range.</Text>
      )}
      {headroom ? (
        <View style={{ gap: space.sm }} testID="headroom">
          <ProgressBar
            value={(headroom.shuntFullScaleV.used / headroom.shuntFullScaleV.limit) * 100}
            tone={headroom.shuntFullScaleV.used > headroom.shuntFullScaleV.limit ? 'ember' : headroom.shuntFullScaleV.used > 0.9 * headroom.shuntFullScaleV.limit ? 'amber' : 'moss'}
            label={`Shunt: ${headroom.shuntFullScaleV.text}`}
          />
          <ProgressBar
            value={(headroom.busV.used / headroom.busV.limit) * 100}
            tone={headroom.busV.used > headroom.busV.limit ? 'ember' : headroom.busV.used > 0.9 * headroom.busV.limit ? 'amber' : 'moss'}
            label={`Panel voltage: ${headroom.busV.text}`}
          />
        </View>
      ) : null}
      {result.coldVoc ? (
        <Text style={type.small} testID="cold-voc">
          {result.coldVoc.note}
        </Text>
      ) : null}
      {aboveRating ? <Notice title={ABOVE_RATING} detail="The panel can give more voltage than the logger's input takes. Leave it disconnected." /> : null}
      {refusals.length ? (
        <Notice title="This install would not measure correctly">
          {refusals.map((e) => (
            <Text key={e.path + e.message} style={type.body}>
              • {e.message}
            </Text>
          ))}
        </Notice>
      ) : null}
    </Card>
  );
}

function Value({ label, value, testID }: { label: string; value: string; testID?: string }) {
  return (
    <View style={styles.value}>
      <Text style={type.label}>{label}</Text>
      <Text style={[type.mono, { fontSize: 17 }]} testID={testID}>
        {value}
      </Text>
    </View>
  );
}

const styles = StyleSheet.create({
  grid: { flexDirection: 'row', flexWrap: 'wrap', gap: space.md },
  value: { minWidth: 130, flexGrow: 1, flexBasis: 130, gap: 2 },
});
