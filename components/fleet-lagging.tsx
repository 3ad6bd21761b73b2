// Lagging sites, support's screen: sites with loggers behind the current release of their
// channel, how long and why; one site's loggers with each reason in plain words, and "Retry failed install".
import React from 'react';
import { Pressable, StyleSheet, Text, View } from 'react-native';
import { Page } from './shell';
import { Badge, Button, Card, EmptyState, Field, Mono, Notice, Row, Skeleton } from './ui';
import { ConfirmDialog } from './confirm';
import { DownloadLink, Pager, Select } from './fleet-controls';
import { relativeTime, summaryAge } from './format';
import { SiteTime, siteTimeWords } from './site-time';
import { colors, fonts, space, touchTarget, type, type Tone } from './theme';
import { LAGGING_REASON_LABELS, type LaggingList, type LaggingLogger, type LaggingReason, type LaggingSite, type RetryOrder } from '../schemas/fleet';
import { LAGGING_REASONS } from '../schemas/words';
import { LAGGING_REASON_WORDS } from './words';
import type { LaggingFilter } from '../hooks/fleet';

/** Short words and tones for the badges (components/words.ts); the site view spells each reason out in full. */
export const REASON_SHORT = Object.fromEntries(LAGGING_REASONS.map((r) => [r, LAGGING_REASON_WORDS[r].label])) as Record<LaggingReason, string>;
export const REASON_TONES = Object.fromEntries(LAGGING_REASONS.map((r) => [r, LAGGING_REASON_WORDS[r].tone])) as Record<LaggingReason, Tone>;

/** "3 d" for how long a site has lagged. */
export function lagFor(since: string, now = new Date()): string {
  return relativeTime(since, now).replace(/ ago$/, '');
}

function ReasonBadges({ reasons }: { reasons: LaggingSite['reasons'] }) {
  const entries = LAGGING_REASONS.filter((r) => reasons[r]);
  return (
    <Row wrap gap={space.xs}>
      {entries.map((r) => (
        <Badge key={r} label={`${REASON_SHORT[r]} · ${reasons[r]}`} tone={REASON_TONES[r]} />
      ))}
    </Row>
  );
}

type ListProps = {
  state: { data?: LaggingList; isPending: boolean; isFetching?: boolean; error: Error | null; refetch: () => unknown };
  filter: LaggingFilter;
  onFilter: (f: LaggingFilter) => void;
  exportHref: string;
  wide: boolean;
  onOpen: (siteId: string) => void;
};

export function LaggingSitesScreen({ state, filter, onFilter, exportHref, wide, onOpen }: ListProps) {
  const [customer, setCustomer] = React.useState(filter.customer ?? '');
  React.useEffect(() => {
    const t = setTimeout(() => {
      if ((filter.customer ?? '') !== customer.trim()) onFilter({ ...filter, customer: customer.trim() || undefined, page: 1 });
    }, 300);
    return () => clearTimeout(t);
  }, [customer]); // eslint-disable-line react-hooks/exhaustive-deps
  const total = state.data?.total;
  const age = summaryAge(state.data?.ageS);
  return (
    <Page
      title="Lagging sites"
      subtitle={
        total === undefined ? 'Sites with loggers behind their channel’s current release' : `${total} ${total === 1 ? 'site' : 'sites'} lagging${age ? ` · ${age}` : ''}`
      }
      actions={<DownloadLink href={exportHref} label="Export CSV" testID="lagging-export" />}
    >
      <Card style={{ gap: space.md }}>
        <Row wrap gap={space.md} style={{ alignItems: 'flex-end' }}>
          <View style={{ flexGrow: 1, flexBasis: 220 }}>
            <Field label="Customer" value={customer} onChangeText={setCustomer} placeholder="Customer name" autoCapitalize="none" testID="lagging-customer" />
          </View>
          <Select
            label="Reason"
            value={filter.reason}
            options={LAGGING_REASONS.map((r) => ({ value: r, label: REASON_SHORT[r] }))}
            onChange={(v) => onFilter({ ...filter, reason: v as LaggingReason | undefined, page: 1 })}
            anyLabel="Any reason"
            testID="lagging-reason"
          />
          <Select
            label="Sort"
            value={`${filter.sort}:${filter.dir}`}
            options={[
              { value: 'lagging_since:asc', label: 'Longest lagging first' },
              { value: 'lagging_since:desc', label: 'Most recent first' },
              { value: 'behind:desc', label: 'Most loggers behind' },
              { value: 'behind:asc', label: 'Fewest loggers behind' },
            ]}
            onChange={(v) => {
              const [sort, dir] = (v ?? 'lagging_since:asc').split(':');
              onFilter({ ...filter, sort: sort as LaggingFilter['sort'], dir: dir as LaggingFilter['dir'], page: 1 });
            }}
            anyLabel="Longest lagging first"
            testID="lagging-sort"
          />
        </Row>
      </Card>
      {state.isPending ? (
        <Skeleton rows={6} height={wide ? touchTarget : 96} />
      ) : state.error && !state.data ? (
        <View style={{ gap: space.sm }}>
          <Notice title={(state.error as { title?: string }).title ?? 'Could not load lagging sites'} detail={(state.error as { detail?: string }).detail ?? state.error.message} />
          <View style={{ alignSelf: 'flex-start' }}>
            <Button label="Try again" variant="secondary" onPress={() => state.refetch()} />
          </View>
        </View>
      ) : state.data && !state.data.rows.length ? (
        filter.reason || filter.customer ? (
          <EmptyState title="No lagging sites match" detail="Try another reason or customer." />
        ) : (
          <EmptyState title="No site is lagging" detail="Every enrolled logger runs its channel’s current release or newer." />
        )
      ) : state.data ? (
        <View style={{ gap: space.md, opacity: state.isFetching ? 0.7 : 1 }}>
          {wide ? <LaggingTable rows={state.data.rows} onOpen={onOpen} /> : state.data.rows.map((s) => <LaggingCard key={s.siteId} site={s} onOpen={onOpen} />)}
          <Pager total={state.data.total} page={filter.page} pageSize={filter.pageSize} wide={wide} onPage={(page) => onFilter({ ...filter, page })} onPageSize={(pageSize) => onFilter({ ...filter, pageSize, page: 1 })} />
        </View>
      ) : null}
    </Page>
  );
}

function LaggingCard({ site, onOpen }: { site: LaggingSite; onOpen: (id: string) => void }) {
  return (
    <Pressable role="link" onPress={() => onOpen(site.siteId)} testID="lagging-card">
      <Card style={{ gap: space.xs }}>
        <Row style={{ justifyContent: 'space-between', alignItems: 'flex-start' }}>
          <View style={{ flexShrink: 1 }}>
            <Text style={[type.body, { fontFamily: fonts.semibold }]}>{site.siteName}</Text>
            <Text style={type.small}>{site.customer}</Text>
          </View>
          <Badge label={`${site.behind} of ${site.total} behind`} tone="amber" />
        </Row>
        <Text style={type.small}>
          Lagging for {lagFor(site.laggingSince)} · oldest <Text style={{ fontFamily: fonts.mono }}>{site.oldestVersion ?? '—'}</Text> · last contact {site.lastContactAt ? relativeTime(site.lastContactAt) : 'never'}
        </Text>
        {site.lastContactAt ? <Text style={type.small}>Last contact <SiteTime at={site.lastContactAt} timeZone={site.timeZone} /></Text> : null}
        <ReasonBadges reasons={site.reasons} />
      </Card>
    </Pressable>
  );
}

const cols = [
  { key: 'site', label: 'Site · customer', flex: 2 },
  { key: 'behind', label: 'Behind / total', flex: 0.9 },
  { key: 'oldest', label: 'Oldest', flex: 0.8 },
  { key: 'since', label: 'Lagging for', flex: 0.9 },
  { key: 'contact', label: 'Last contact', flex: 1 },
  { key: 'reasons', label: 'Reasons', flex: 2.4 },
] as const;

function LaggingTable({ rows, onOpen }: { rows: LaggingSite[]; onOpen: (id: string) => void }) {
  return (
    <Card style={{ padding: 0, gap: 0 }}>
      <View role="table" aria-label="Lagging sites">
        <View role="row" style={[styles.tr, styles.thead]}>
          {cols.map((c) => (
            <Text role="columnheader" key={c.key} style={[type.label, { flex: c.flex }]}>
              {c.label}
            </Text>
          ))}
        </View>
        {rows.map((s) => (
          <Pressable role="row" key={s.siteId} onPress={() => onOpen(s.siteId)} aria-label={`Lagging site ${s.siteName}`} testID="lagging-row" style={(st) => [styles.tr, (st as { hovered?: boolean }).hovered && { backgroundColor: colors.paper }]}>
            <View role="cell" style={{ flex: 2 }}>
              <Text style={[type.dense, { fontFamily: fonts.medium }]}>{s.siteName}</Text>
              <Text style={type.small}>{s.customer}</Text>
            </View>
            <Text role="cell" style={[type.dense, { flex: 0.9, fontVariant: ['tabular-nums'] }]}>
              {s.behind} / {s.total}
            </Text>
            <Mono style={{ flex: 0.8, fontSize: 13 }}>{s.oldestVersion ?? '—'}</Mono>
            <Text role="cell" style={[type.dense, { flex: 0.9 }]} aria-label={`since ${siteTimeWords(s.laggingSince, s.timeZone, true)}`}>
              {lagFor(s.laggingSince)}
            </Text>
            <Text role="cell" style={[type.dense, { flex: 1 }]}>
              {s.lastContactAt ? relativeTime(s.lastContactAt) : 'never'}
              {s.lastContactAt ? (
                <>
                  {'\n'}
                  <SiteTime at={s.lastContactAt} timeZone={s.timeZone} style={type.small} />
                </>
              ) : null}
            </Text>
            <View role="cell" style={{ flex: 2.4 }}>
              <ReasonBadges reasons={s.reasons} />
            </View>
          </Pressable>
        ))}
      </View>
    </Card>
  );
}

// ─── One lagging site ───────────────────────────────────────────────────────

/**
 * The retries that clear every failed install at a site: the whole site when all of them are of one
 * release, else one request per release with its loggers.
 */
export function siteRetryOrders(siteId: string, failed: Pick<LaggingLogger, 'id' | 'targetReleaseId'>[]): RetryOrder[] {
  const byRelease = new Map<string, string[]>();
  for (const l of failed) byRelease.set(l.targetReleaseId, [...(byRelease.get(l.targetReleaseId) ?? []), l.id]);
  if (byRelease.size === 1) return [{ releaseId: [...byRelease.keys()][0], siteId }];
  return [...byRelease].map(([releaseId, loggerIds]) => ({ releaseId, loggerIds }));
}

type SiteProps = {
  state: { data?: LaggingSite | null; isPending: boolean; error: Error | null; refetch: () => unknown };
  canRetry: boolean;
  retry: { busy: boolean; error: Error | null; done: number | null; run: (orders: RetryOrder[]) => void };
  onOpenLogger: (id: string) => void;
  onOpenSite: (id: string) => void;
  onBack: () => void;
};

export function LaggingSiteScreen({ state, canRetry, retry, onOpenLogger, onOpenSite, onBack }: SiteProps) {
  const [asking, setAsking] = React.useState<{ orders: RetryOrder[]; label: string } | null>(null);
  if (state.isPending) return <Skeleton rows={6} height={64} />;
  if (state.error) {
    return <Notice title={(state.error as { title?: string }).title ?? 'Could not load this site'} detail={(state.error as { detail?: string }).detail ?? state.error.message} />;
  }
  const site = state.data;
  if (!site) {
    return (
      <Page title="Not lagging" subtitle="This site has no logger behind its channel’s current release">
        <EmptyState title="Nothing to catch up" detail="Every enrolled logger here runs its channel’s current release or newer." action={<Button label="Back to lagging sites" variant="secondary" onPress={onBack} />} />
      </Page>
    );
  }
  const failed = site.loggers.filter((l) => l.reason === 'failed_awaiting_retry');
  const failedVersions = [...new Set(failed.map((l) => l.targetVersion))];
  const failedOf = failedVersions.length === 1 ? failedVersions[0] : `${failedVersions.length} releases`;
  return (
    <Page
      title={site.siteName}
      subtitle={`${site.customer} · ${site.behind} of ${site.total} loggers behind · lagging for ${lagFor(site.laggingSince)}`}
      actions={
        <>
          <Button label="Site details" variant="secondary" onPress={() => onOpenSite(site.siteId)} />
          {canRetry && failed.length ? (
            <Button
              label={`Retry failed installs here (${failed.length})`}
              onPress={() => setAsking({ orders: siteRetryOrders(site.siteId, failed), label: `all ${failed.length} failed installs of ${failedOf} at ${site.siteName}` })}
              testID="retry-site"
            />
          ) : null}
        </>
      }
    >
      {retry.done !== null ? <Notice tone="moss" title={`${retry.done} ${retry.done === 1 ? 'install' : 'installs'} will be offered again`} detail="Each logger gets the release again at its next check-in." /> : null}
      {retry.error ? <Notice title={(retry.error as { title?: string }).title ?? 'Retry refused'} detail={(retry.error as { detail?: string }).detail ?? retry.error.message} /> : null}
      <Card style={{ gap: space.xs }}>
        <Text style={type.small}>
          Oldest version here <Text style={{ fontFamily: fonts.mono }}>{site.oldestVersion ?? '—'}</Text> · last contact{' '}
          {site.lastContactAt ? (
            <>
              {relativeTime(site.lastContactAt)} (<SiteTime at={site.lastContactAt} timeZone={site.timeZone} testID="lagging-last-contact" />)
            </>
          ) : (
            'never'
          )}{' '}
          · lagging since <SiteTime at={site.laggingSince} timeZone={site.timeZone} testID="lagging-since" />
        </Text>
        <ReasonBadges reasons={site.reasons} />
      </Card>
      <View style={{ gap: space.sm, flexDirection: 'row', flexWrap: 'wrap' }} role="list" aria-label="Loggers behind">
        {site.loggers.map((l) => (
          <View role="listitem" key={l.id} style={{ flexGrow: 1, flexBasis: 340 }}>
            <LaggingLoggerCard
              logger={l}
              onOpen={onOpenLogger}
              onRetry={canRetry && l.reason === 'failed_awaiting_retry' ? () => setAsking({ orders: [{ releaseId: l.targetReleaseId, loggerIds: [l.id] }], label: `the failed install of ${l.targetVersion} on ${l.serial}` }) : undefined}
            />
          </View>
        ))}
      </View>
      <ConfirmDialog
        visible={asking !== null}
        title="Retry the failed install?"
        detail={asking ? `This clears ${asking.label}; the release is offered again at the next check-in, within its share and daylight window.` : undefined}
        confirmLabel="Retry install"
        busy={retry.busy}
        onCancel={() => setAsking(null)}
        onConfirm={() => {
          if (!asking) return;
          retry.run(asking.orders);
          setAsking(null);
        }}
      />
    </Page>
  );
}

function LaggingLoggerCard({ logger, onOpen, onRetry }: { logger: LaggingLogger; onOpen: (id: string) => void; onRetry?: () => void }) {
  return (
    <Card style={{ gap: space.xs, flexGrow: 1 }} testID="lagging-logger">
      <Row wrap style={{ justifyContent: 'space-between' }}>
        <Pressable role="link" aria-label={`Logger ${logger.serial}`} onPress={() => onOpen(logger.id)} style={{ minHeight: touchTarget, justifyContent: 'center' }}>
          <Mono style={{ fontFamily: fonts.monoMedium, fontSize: 16, textDecorationLine: 'underline' }}>{logger.serial}</Mono>
        </Pressable>
        <Badge label={REASON_SHORT[logger.reason]} tone={REASON_TONES[logger.reason]} />
      </Row>
      <Text style={type.small}>
        runs <Text style={{ fontFamily: fonts.mono }}>{logger.firmware ?? 'unknown'}</Text> · lacks <Text style={{ fontFamily: fonts.mono }}>{logger.targetVersion}</Text>
      </Text>
      <Text style={type.body} testID="lagging-reason-text">
        {logger.reasonLabel || LAGGING_REASON_LABELS[logger.reason]}
        {logger.detail ? <Text style={type.small}>{`\n${logger.detail}`}</Text> : null}
      </Text>
      {onRetry ? (
        <View style={{ alignSelf: 'flex-start' }}>
          <Button label="Retry failed install" variant="secondary" onPress={onRetry} testID="retry-logger" />
        </View>
      ) : null}
    </Card>
  );
}

const styles = StyleSheet.create({
  tr: { flexDirection: 'row', alignItems: 'center', gap: space.md, paddingHorizontal: space.lg, minHeight: touchTarget, paddingVertical: space.sm, borderBottomColor: colors.line, borderBottomWidth: 1 },
  thead: { backgroundColor: colors.paperDeep, minHeight: 36 },
});
