// The rollout dashboard on a release's page (issue 6 §4): the halt thresholds beside their current
// values ("failure ratio 1.8 % of 5 %"), finished installs against the minimum, and the adoption chart
// (installs per day, running total). The page refreshes itself while the release is live.
import React from 'react';
import { Text, View } from 'react-native';
import { Badge, Card, ProgressBar, Row } from './ui';
import { DayLineChart } from './charts/line';
import { colors, space, type } from './theme';
import type { Release } from '../hooks/releases';
import type { VersionMatrix } from '../schemas/fleet';

type Adoption = VersionMatrix['models'][number]['releases'][number]['adoption'];

const pct = (x: number) => `${Number((x * 100).toFixed(1))} %`;

/**
 * The failure ratio as the automatic halt reads it: failed over finished (installed + failed) installs,
 * judged only once the release's minimum number of finished installs is in.
 */
export function failureRatioNow(counts: { installed: number; failed: number }, t: { haltFailureRatio: number; haltMinReports: number }) {
  const finished = counts.installed + counts.failed;
  const ratio = finished ? counts.failed / finished : 0;
  return { finished, ratio, judged: finished >= t.haltMinReports && finished > 0, over: finished >= t.haltMinReports && finished > 0 && ratio > t.haltFailureRatio };
}

export function ReleaseDashboard({ r, adoption, refreshing }: { r: Release; adoption: Adoption | null; refreshing: boolean }) {
  const threshold = Number(r.haltFailureRatio);
  const now = failureRatioNow(r.counts, { haltFailureRatio: threshold, haltMinReports: r.haltMinReports });
  const used = threshold > 0 ? now.ratio / threshold : 0;
  const tone = now.over ? 'ember' : used >= 0.5 ? 'amber' : 'moss';
  const last = adoption?.[adoption.length - 1];
  return (
    <View style={{ gap: space.lg }}>
      <Card testID="halt-thresholds">
        <Row wrap style={{ justifyContent: 'space-between' }}>
          <Text role="heading" aria-level={2} style={type.heading}>
            Halt thresholds now
          </Text>
          {refreshing ? <Badge label="Live · refreshes every 15 s" tone="slate" /> : null}
        </Row>
        <View style={{ gap: space.xs }}>
          <Text style={type.body} testID="failure-ratio">
            Failure ratio {pct(now.ratio)} of {pct(threshold)}
          </Text>
          <ProgressBar value={Math.min(100, used * 100)} tone={tone} />
          <Text style={type.small}>
            {r.counts.failed} failed of {now.finished} finished installs.{' '}
            {now.judged ? (now.over ? 'Above the threshold: the release halts at the next install report.' : 'Judged: below the threshold.') : `Judged from ${r.haltMinReports} finished installs (${Math.max(0, r.haltMinReports - now.finished)} to go).`}
          </Text>
        </View>
        <View style={{ gap: space.xs, borderTopColor: colors.line, borderTopWidth: 1, paddingTop: space.sm }}>
          <Text style={type.body}>Watchdog and brown-out resets: halt above {r.haltResetFactor} × the rate before the release</Text>
          <Text style={type.small}>Judged at check-ins that bring resets on this release, over loggers observed a full day.</Text>
        </View>
      </Card>
      <Card testID="adoption">
        <Text role="heading" aria-level={2} style={type.heading}>
          Adoption
        </Text>
        {adoption && adoption.length ? (
          <>
            <DayLineChart label={`Installs of ${r.version} per day, running total`} points={adoption.map((d) => ({ label: d.day.slice(5), value: d.cumulative }))} color={colors.moss} />
            <Text style={type.small}>
              {last?.cumulative ?? 0} installed since {adoption[0].day}; {last?.installed ?? 0} on {last?.day}.
            </Text>
          </>
        ) : (
          <Text style={type.small}>No installs confirmed yet.</Text>
        )}
      </Card>
    </View>
  );
}
