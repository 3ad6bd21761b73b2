// The rollout dashboard on a release's page: the trip points beside their current
// values ("failure ratio 1.8 % of 5 %") as the trip judges them, the time to install, the
// breakdown per board revision and per site (failures first), and the adoption chart. The page
// refreshes itself every 15 s while the release is live.
import React from 'react';
import { Pressable, StyleSheet, Text, View } from 'react-native';
import { Badge, Card, ProgressBar, Row, Skeleton } from './ui';
import { QueryView, type QueryState } from './query-state';
import { Pager } from './fleet-controls';
import { DayLineChart } from './charts/lazy';
import { duration } from './format';
import { colors, fonts, space, touchTarget, type } from './theme';
import type { InstallTally, ReleaseDashboard as Dashboard, ReleaseSiteRow } from '../schemas/releases';
import type { List } from '../schemas/common';

const pct = (x: number) => `${Number((x * 100).toFixed(1))} %`;
const rate = (x: number) => Number(x.toFixed(3)).toString();

export const SITE_PAGE_SIZE = 10;

type Props = {
  version: string;
  state: QueryState<Dashboard>;
  /** Sites beyond the first page (the first comes with the dashboard). */
  sitePage: number;
  sites: { data?: List<ReleaseSiteRow>; isFetching: boolean };
  onSitePage: (page: number) => void;
  onOpenSite: (siteId: string) => void;
  refreshing: boolean;
  wide: boolean;
};

export function ReleaseDashboard(props: Props) {
  return (
    <QueryView state={props.state} rows={5}>
      {(d) => <DashboardView {...props} d={d} />}
    </QueryView>
  );
}

function DashboardView({ d, version, sitePage, sites, onSitePage, onOpenSite, refreshing, wide }: Props & { d: Dashboard }) {
  const siteList = sitePage > 1 && sites.data ? sites.data : d.bySite;
  return (
    <View style={{ gap: space.lg }} testID="release-dashboard">
      <View style={wide ? styles.columns : { gap: space.lg }}>
        <View style={wide ? styles.column : undefined}>
          <TripGauges d={d} refreshing={refreshing} />
        </View>
        <View style={wide ? styles.column : undefined}>
          <TimeToInstall d={d} />
        </View>
      </View>
      <Boards d={d} wide={wide} />
      <Card testID="by-site">
        <Text role="heading" aria-level={2} style={type.heading}>
          By site
        </Text>
        <Text style={type.small}>Failures first, then installs under way. Each bar is the share of the site’s loggers on {version} or newer.</Text>
        {siteList.total === 0 ? <Text style={type.small}>No enrolled logger of this model and channel at any site yet.</Text> : null}
        {sites.isFetching && sitePage > 1 && !sites.data ? <Skeleton rows={3} /> : null}
        {siteList.rows.map((s) => (
          <SiteRow key={s.siteId} s={s} onOpen={onOpenSite} wide={wide} />
        ))}
        {siteList.total > SITE_PAGE_SIZE ? <Pager total={siteList.total} page={sitePage} pageSize={SITE_PAGE_SIZE} onPage={onSitePage} wide={wide} /> : null}
      </Card>
      <Card testID="adoption">
        <Text role="heading" aria-level={2} style={type.heading}>
          Adoption
        </Text>
        <Adoption d={d} version={version} />
      </Card>
    </View>
  );
}

function TripGauges({ d, refreshing }: { d: Dashboard; refreshing: boolean }) {
  const f = d.trip.failureRatio;
  const r = d.trip.resetRate;
  const used = f.threshold > 0 ? f.ratio / f.threshold : 0;
  const tone = f.over ? 'ember' : used >= 0.5 ? 'amber' : 'moss';
  const resetUsed = r.threshold > 0 ? r.factor / r.threshold : 0;
  const resetTone = r.over ? 'ember' : resetUsed >= 0.5 ? 'amber' : 'moss';
  return (
    <Card testID="trip-points" style={styles.fill}>
      <Row wrap style={{ justifyContent: 'space-between' }}>
        <Text role="heading" aria-level={2} style={type.heading}>
          Trip points now
        </Text>
        {refreshing ? <Badge label="Live · refreshes every 15 s" tone="slate" /> : null}
      </Row>
      <View style={{ gap: space.xs }}>
        <Text style={type.body} testID="failure-ratio">
          Failure ratio {pct(f.ratio)} of {pct(f.threshold)}
        </Text>
        <ProgressBar value={Math.min(100, used * 100)} name="Failure ratio against its trip point" tone={tone} />
        <Text style={type.small}>
          {f.failed} failed of {f.finished} finished installs (connection and low-supply failures are retried, not counted).{' '}
          {f.judged ? (f.over ? 'Above the threshold: the release trips at the next install report.' : 'Judged: below the threshold.') : `Judged from ${f.minReports} finished installs (${Math.max(0, f.minReports - f.finished)} to go).`}
        </Text>
      </View>
      <View style={{ gap: space.xs, borderTopColor: colors.line, borderTopWidth: 1, paddingTop: space.sm }}>
        <Text style={type.body} testID="reset-rate">
          {r.judged ? `Resets ${Number(r.factor.toFixed(2))} × the rate before, of ${r.threshold} ×` : `Watchdog and brown-out resets: trips above ${r.threshold} × the rate before`}
        </Text>
        {r.judged ? <ProgressBar value={Math.min(100, resetUsed * 100)} name="Reset rate against its trip point" tone={resetTone} /> : null}
        <Text style={type.small}>
          {r.judged
            ? `${rate(r.after)} resets per logger-day on this release over ${r.loggers} loggers, against ${rate(r.before)} before it${r.before < r.beforeJudged ? ` (judged against at least ${rate(r.beforeJudged)})` : ''}.`
            : r.loggers >= r.minLoggers && r.loggerDaysBefore < r.minLoggerDaysBefore
              ? `Not judged: the check-ins kept hold only ${rate(r.loggerDaysBefore)} logger-days before this release (at least ${r.minLoggerDaysBefore} are needed to compare).`
              : `Judged once ${r.minLoggers} loggers have run it a full day (${r.minHours} h); ${r.loggers} so far.`}
        </Text>
      </View>
      <DriftGauge drift={d.trip.drift} />
    </Card>
  );
}

type Drift = Dashboard['trip']['drift'];

/** How each measurement-drift figure reads: its words, its shift and trip point in their units. */
const DRIFT_LOOKS: Record<'energy' | 'temperature' | 'flagged', { label: string; shift: (x: number) => string; point: (x: number) => string }> = {
  energy: { label: 'Daily energy against the clear-sky model', shift: (x) => `${x > 0 ? '+' : x < 0 ? '−' : ''}${pct(Math.abs(x))}`, point: (x) => `±${pct(x)}` },
  temperature: { label: 'Probe above the expected air temperature', shift: (x) => `${x > 0 ? '+' : x < 0 ? '−' : ''}${Number(Math.abs(x).toFixed(1))} °C`, point: (x) => `±${x} °C` },
  flagged: { label: 'Flagged probe readings', shift: (x) => `${x > 0 ? '+' : x < 0 ? '−' : ''}${Number((Math.abs(x) * 100).toFixed(1))} points`, point: (x) => `+${Number((x * 100).toFixed(2))} points` },
};

/** The measurement-drift gauge: each figure's median shift after the install against its trip point, from the trip rule itself. */
function DriftGauge({ drift }: { drift: Drift }) {
  return (
    <View style={{ gap: space.xs, borderTopColor: colors.line, borderTopWidth: 1, paddingTop: space.sm }} testID="measurement-drift">
      <Text style={type.body}>Measurement drift{drift.over ? ': beyond a trip point' : ''}</Text>
      {(['energy', 'temperature', 'flagged'] as const).map((name) => {
        const g = drift[name];
        const look = DRIFT_LOOKS[name];
        const used = g.shift === null || g.threshold <= 0 ? 0 : (name === 'flagged' ? Math.max(0, g.shift) : Math.abs(g.shift)) / g.threshold;
        const tone = g.over ? 'ember' : used >= 0.5 ? 'amber' : 'moss';
        return (
          <View key={name} style={{ gap: space.xs }} testID={`drift-${name}`}>
            <Text style={type.small}>
              {look.label}: {g.shift === null ? 'no figure yet' : look.shift(g.shift)} (trip point {look.point(g.threshold)}
              {g.judged ? `, median of ${g.loggers} loggers` : `; judged from ${drift.minLoggers} loggers, ${g.loggers} so far`})
            </Text>
            {g.judged ? <ProgressBar value={Math.min(100, used * 100)} tone={tone} name={`${look.label} against its trip point`} /> : null}
          </View>
        );
      })}
      <Text style={type.small}>
        Whole days on this release against up to {drift.windowDays} days before it, each logger scaled by its own days before; weather taken out by {drift.controls}{' '}
        {drift.controls === 1 ? 'logger' : 'loggers'} at the same sites that did not install it.
      </Text>
    </View>
  );
}

function TimeToInstall({ d }: { d: Dashboard }) {
  const t = d.timeToInstall;
  return (
    <Card testID="time-to-install" style={styles.fill}>
      <Text role="heading" aria-level={2} style={type.heading}>
        Time to install
      </Text>
      {t.medianS === null ? (
        <Text style={type.small}>No install confirmed yet.</Text>
      ) : (
        <>
          <Text style={type.figure} testID="median-install">
            {duration(t.medianS)}
          </Text>
          <Text style={type.small}>
            Median over {t.installs} {t.installs === 1 ? 'install' : 'installs'}, from the first offer to the logger checking in on the new version
            {t.p90S !== null ? `; 9 in 10 within ${duration(t.p90S)}` : ''}.
          </Text>
        </>
      )}
    </Card>
  );
}

/** Counts of one group as words and numbers; failures in ember when there are any. */
function Counts({ g }: { g: InstallTally }) {
  return (
    <Text style={[type.small, styles.num]}>
      {g.reached} offered · {g.inProgress} under way · {g.installed} installed ·{' '}
      <Text style={g.failed ? { color: colors.ember, fontFamily: fonts.semibold } : undefined}>{g.failed} failed</Text>
      {g.medianInstallS !== null ? ` · median\u00a0${duration(g.medianInstallS)}` : ''}
    </Text>
  );
}

const share = (g: InstallTally) => (g.loggers ? (g.onRelease / g.loggers) * 100 : 0);

function Boards({ d, wide }: { d: Dashboard; wide: boolean }) {
  return (
    <Card testID="by-board">
      <Text role="heading" aria-level={2} style={type.heading}>
        By board revision
      </Text>
      <View style={wide ? styles.boardGrid : { gap: space.md }}>
        {d.byBoard.map((b) => (
          <View key={b.board} style={[styles.group, wide ? styles.boardCell : null]} testID={`board-${b.board}`}>
            <Row wrap style={{ justifyContent: 'space-between' }}>
              <Text style={type.heading}>Board {b.board}</Text>
              {b.targeted ? null : <Badge label="Not targeted" tone="slate" />}
            </Row>
            <ProgressBar value={share(b)} name={`Board ${b.board}: on this release or newer`} tone={b.failed ? 'amber' : 'moss'} />
            <Text style={[type.dense, styles.num]}>
              {b.onRelease} of {b.loggers} on this release or newer
            </Text>
            <Counts g={b} />
          </View>
        ))}
      </View>
    </Card>
  );
}

function SiteRow({ s, onOpen, wide }: { s: ReleaseSiteRow; onOpen: (id: string) => void; wide: boolean }) {
  return (
    <Pressable
      onPress={() => onOpen(s.siteId)}
      role="link"
      style={(st) => [styles.group, styles.siteRow, wide ? styles.siteRowWide : null, (st as { hovered?: boolean }).hovered && { backgroundColor: colors.paper }]}
      testID="release-site"
    >
      <View style={wide ? { flex: 2, gap: 2 } : { gap: 2 }}>
        <Text style={[type.dense, { fontFamily: fonts.semibold }]}>{s.siteName}</Text>
        <Text style={type.small}>{s.customer}</Text>
      </View>
      <View style={wide ? { flex: 3, gap: 2 } : { gap: 2 }}>
        <ProgressBar value={share(s)} name={`${s.siteName}: on this release`} tone={s.failed ? 'amber' : 'moss'} />
        <Text style={[type.small, styles.num]}>
          {s.onRelease} of {s.loggers} on this release
        </Text>
        <Counts g={s} />
      </View>
    </Pressable>
  );
}

function Adoption({ d, version }: { d: Dashboard; version: string }) {
  const last = d.adoption[d.adoption.length - 1];
  if (!last || last.cumulative === 0) return <Text style={type.small}>No installs confirmed yet.</Text>;
  return (
    <>
      <DayLineChart label={`Installs of ${version} per day, running total`} points={d.adoption.map((p) => ({ label: p.day.slice(5), value: p.cumulative }))} color={colors.moss} />
      <Text style={type.small}>
        {last.cumulative} installed since {d.adoption[0].day}; {last.installed} on {last.day}.
      </Text>
    </>
  );
}

const styles = StyleSheet.create({
  columns: { flexDirection: 'row', gap: space.lg, alignItems: 'stretch' },
  column: { flex: 1, minWidth: 0 },
  fill: { flexGrow: 1 },
  num: { fontVariant: ['tabular-nums'] },
  group: { gap: space.xs, paddingVertical: space.sm, borderTopColor: colors.line, borderTopWidth: 1 },
  boardGrid: { flexDirection: 'row', flexWrap: 'wrap', columnGap: space.lg },
  boardCell: { flexBasis: 260, flexGrow: 1 },
  siteRow: { minHeight: touchTarget, borderRadius: 4, paddingHorizontal: space.xs },
  siteRowWide: { flexDirection: 'row', gap: space.lg, alignItems: 'center' },
});
