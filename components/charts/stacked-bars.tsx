// A stacked bar chart (react-native-gifted-charts on react-native-svg): one bar per group, one stack
// per series, with a legend of series names and totals.
import React from 'react';
import { View } from 'react-native';
import { BarChart } from 'react-native-gifted-charts';
import { Legend } from './legend';
import { AXES } from './axes';
import { Measured } from './width';
import { niceMax, seriesColor } from './series';
import { colors, fonts, space } from '../theme';

export type StackedBars = { groups: string[]; series: { label: string; values: number[] }[] };

export function StackedBarChart({ data, height = 180, label }: { data: StackedBars; height?: number; label: string }) {
  const stackData = data.groups.map((g, gi) => ({
    label: g,
    stacks: data.series.map((s, si) => ({ value: s.values[gi] ?? 0, color: seriesColor(si) })).filter((s) => s.value > 0),
  }));
  const max = niceMax(Math.max(1, ...stackData.map((b) => b.stacks.reduce((a, s) => a + s.value, 0))));
  return (
    <View style={{ gap: space.sm }} aria-label={label} role="img">
      <Measured>
        {(width) => {
          const yLabel = 36;
          // The plot gets what is left after the axis labels; bars and gaps share it evenly.
          const room = width - yLabel - 40;
          const n = Math.max(1, data.groups.length);
          const barWidth = Math.max(18, Math.min(48, Math.floor(room / n / 2)));
          const spacing = Math.max(12, Math.floor((room - barWidth * n) / n));
          return (
            <BarChart
              stackData={stackData}
              width={room}
              height={height}
              barWidth={barWidth}
              spacing={spacing}
              // Half a gap before the first stack: the bars sit centred in the plot.
              initialSpacing={Math.floor(spacing / 2)}
              endSpacing={0}
              maxValue={max}
              noOfSections={4}
              yAxisLabelWidth={yLabel}
              {...AXES}
              xAxisLabelTextStyle={{ color: colors.ink, fontFamily: fonts.regular, fontSize: 12 }}
            />
          );
        }}
      </Measured>
      <Legend mono items={data.series.map((s, i) => ({ label: s.label, color: seriesColor(i), value: String(s.values.reduce((a, v) => a + v, 0)) }))} />
    </View>
  );
}
