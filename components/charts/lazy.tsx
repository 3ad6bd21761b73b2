// The charts as screens use them, loaded on first use (components/charts/all.ts) with a quiet placeholder
// of the chart's height meanwhile. A chart imported directly would put the charting library in the chunk
// every screen shares (the bundler's common chunk, loaded before sign-in).
import React from 'react';
import { View } from 'react-native';
import type * as Charts from './all';
import { colors, radii } from '../theme';

const load = () => import('./all');
const LazyDayLineChart = React.lazy(() => load().then((m) => ({ default: m.DayLineChart })));
const LazySparkline = React.lazy(() => load().then((m) => ({ default: m.Sparkline })));
const LazyStackedBarChart = React.lazy(() => load().then((m) => ({ default: m.StackedBarChart })));

function Placeholder({ height }: { height: number }) {
  return <View aria-busy accessibilityLabel="Loading the chart" style={{ height, borderRadius: radii.sm, backgroundColor: colors.paperDeep }} />;
}

export function DayLineChart(props: React.ComponentProps<typeof Charts.DayLineChart>) {
  return (
    <React.Suspense fallback={<Placeholder height={props.height ?? 160} />}>
      <LazyDayLineChart {...props} />
    </React.Suspense>
  );
}

export function Sparkline(props: React.ComponentProps<typeof Charts.Sparkline>) {
  return (
    <React.Suspense fallback={<Placeholder height={props.height ?? 48} />}>
      <LazySparkline {...props} />
    </React.Suspense>
  );
}

export function StackedBarChart(props: React.ComponentProps<typeof Charts.StackedBarChart>) {
  return (
    <React.Suspense fallback={<Placeholder height={props.height ?? 180} />}>
      <LazyStackedBarChart {...props} />
    </React.Suspense>
  );
}
