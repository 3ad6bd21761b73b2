// A line chart over days (adoption, sparklines): react-native-gifted-charts fitted to the width it gets.
import React from 'react';
import { StyleSheet, Text, View } from 'react-native';
import { LineChart } from 'react-native-gifted-charts';
import { AXES } from './axes';
import { Measured } from './width';
import { niceMax } from './series';
import { colors, fonts, space, type } from '../theme';

export type Point = { label: string; value: number | null };

const DAY_LABEL_WIDTH = 44;
const styles = StyleSheet.create({
  dayLabel: { position: 'absolute', width: DAY_LABEL_WIDTH, alignItems: 'center' },
  dayLabelText: { color: colors.inkSoft, fontFamily: fonts.regular, fontSize: 10, lineHeight: 14 },
});

export function DayLineChart({ points, height = 160, color = colors.moss, label, unit = '' }: { points: Point[]; height?: number; color?: string; label: string; unit?: string }) {
  const values = points.filter((p) => p.value !== null) as { label: string; value: number }[];
  if (values.length < 2) return <Text style={type.small}>Not enough data yet for a chart.</Text>;
  const every = Math.max(1, Math.ceil(points.length / 6));
  return (
    <View style={{ gap: space.xs }} role="img" aria-label={label}>
      <Measured>
        {(width) => {
          const yLabel = 40;
          // Room at both ends for half a day label, so the first and last labels are not cut.
          const edge = DAY_LABEL_WIDTH / 2;
          const room = width - yLabel - 32 - 2 * edge;
          const spacing = Math.max(2, room / Math.max(1, points.length - 1));
          // The package gives each label a box one spacing wide starting half a spacing left of its point;
          // a fixed-width label centred on the point reads right at any spacing.
          const dayLabel = (text: string) => () => (
            <View style={{ width: spacing, height: 18 }}>
              <View style={[styles.dayLabel, { left: spacing / 2 - DAY_LABEL_WIDTH / 2 }]}>
                <Text style={styles.dayLabelText}>{text}</Text>
              </View>
            </View>
          );
          return (
            <LineChart
              data={points.map((p, i) => ({ value: p.value ?? 0, labelComponent: i % every === 0 ? dayLabel(p.label) : undefined, hideDataPoint: p.value === null }))}
              width={room + 2 * edge}
              height={height}
              spacing={spacing}
              initialSpacing={edge}
              endSpacing={edge}
              color={color}
              thickness={2}
              hideDataPoints={points.length > 20}
              dataPointsColor={color}
              noOfSections={4}
              maxValue={niceMax(Math.max(...values.map((v) => v.value)))}
              yAxisLabelWidth={yLabel}
              yAxisLabelSuffix={unit}
              {...AXES}
            />
          );
        }}
      </Measured>
    </View>
  );
}

/** A small line without axes for a logger's last days (supply voltage, temperature). */
export function Sparkline({ values, color = colors.slate, height = 48, label }: { values: (number | null)[]; color?: string; height?: number; label: string }) {
  const known = values.filter((v): v is number => v !== null);
  if (known.length < 2) return <Text style={type.small}>No readings in this period.</Text>;
  const min = Math.min(...known);
  const max = Math.max(...known);
  const pad = (max - min) * 0.1 || 0.5;
  return (
    <View role="img" aria-label={label}>
      <Measured min={160}>
        {(width) => (
          <LineChart
            data={values.map((v) => ({ value: (v ?? min) - (min - pad), hideDataPoint: true }))}
            width={width - 8}
            height={height}
            spacing={(width - 8) / Math.max(1, values.length - 1)}
            initialSpacing={0}
            endSpacing={0}
            color={color}
            thickness={1.5}
            hideDataPoints
            hideRules
            hideYAxisText
            yAxisLabelWidth={0}
            xAxisColor="transparent"
            yAxisColor="transparent"
            maxValue={max - min + 2 * pad}
            disableScroll
            isAnimated={false}
          />
        )}
      </Measured>
    </View>
  );
}
