// Versions: per model, loggers per firmware × board as a matrix and a stacked bar chart,
// each channel's share on its current release, and the adoption of each release over time.
import React from 'react';
import { ScrollView, StyleSheet, Text, View } from 'react-native';
import { Link } from 'expo-router';
import { Page } from './shell';
import { Badge, Card, EmptyState, Mono, ProgressBar, Row } from './ui';
import { Choices } from './choice';
import { QueryView, type QueryState } from './query-state';
import { DayLineChart, StackedBarChart } from './charts/lazy';
import { colors, fonts, linkTarget, space, touchTarget, type } from './theme';
import type { VersionMatrix } from '../schemas/fleet';

type ModelVersions = VersionMatrix['models'][number];

const pct = (share: number) => `${(share * 100).toFixed(share > 0 && share < 0.1 ? 1 : 0)} %`;

export function VersionsScreen({ state, versionHref, onOpenRelease }: { state: QueryState<VersionMatrix>; versionHref: (modelId: string, firmware: string | null, board?: string) => string; onOpenRelease: (id: string) => void }) {
  return (
    <Page title="Versions" subtitle="What the fleet runs, per model, board and channel">
      <QueryView state={state} rows={6}>
        {(data) =>
          data.models.length ? (
            <View style={{ gap: space.xl }}>
              {data.models.map((m) => (
                <ModelSection key={m.modelId} model={m} versionHref={versionHref} onOpenRelease={onOpenRelease} />
              ))}
            </View>
          ) : (
            <EmptyState title="No loggers yet" detail="Versions appear once loggers are registered and check in." />
          )
        }
      </QueryView>
    </Page>
  );
}

function ModelSection({ model, versionHref, onOpenRelease }: { model: ModelVersions; versionHref: (modelId: string, firmware: string | null, board?: string) => string; onOpenRelease: (id: string) => void }) {
  const withAdoption = model.releases.filter((r) => r.adoption.length > 0);
  const [releaseId, setReleaseId] = React.useState<string | undefined>(withAdoption[0]?.id);
  const release = withAdoption.find((r) => r.id === releaseId) ?? withAdoption[0];
  return (
    <View style={{ gap: space.md }} testID="model-versions">
      <Text role="heading" aria-level={2} style={type.heading}>
        {model.modelName}
      </Text>

      <Row wrap gap={space.md} style={{ alignItems: 'stretch' }}>
        {model.channels.map((t) => (
          <Card key={t.channel} style={{ flexGrow: 1, flexBasis: 260 }}>
            <Row style={{ justifyContent: 'space-between' }}>
              <Text style={[type.body, { fontFamily: fonts.semibold }]}>Channel {t.channel}</Text>
              {t.currentRelease ? <Mono>{t.currentRelease.version}</Mono> : <Badge label="No current release" tone="ink" />}
            </Row>
            <ProgressBar value={t.share * 100} name={`Channel ${t.channel}: on the current release or newer`} tone={t.share >= 0.9 ? 'moss' : t.share >= 0.5 ? 'slate' : 'amber'} />
            <Text style={type.small}>
              {t.onCurrent} of {t.loggers} enrolled loggers ({pct(t.share)}) on the current release or newer
              {t.currentRelease ? ` · ${t.currentRelease.state} at ${t.currentRelease.share} % share` : ''}
            </Text>
          </Card>
        ))}
      </Row>

      <Card>
        <Text style={type.label}>Loggers per version and board</Text>
        <ScrollView horizontal>
          <View role="table" aria-label={`${model.modelName} versions by board`} style={{ minWidth: 320 }}>
            <View role="row" style={[styles.tr, styles.thead]}>
              <Text role="columnheader" style={[type.label, styles.firstCol]}>
                Firmware
              </Text>
              {model.boards.map((b) => (
                <Text role="columnheader" key={b} style={[type.label, styles.num]}>
                  Board {b}
                </Text>
              ))}
              <Text role="columnheader" style={[type.label, styles.num]}>
                Total
              </Text>
            </View>
            {model.versions.map((v) => (
              <View role="row" key={v.firmware ?? 'none'} style={styles.tr}>
                <View role="cell" style={styles.firstCol}>
                  {v.firmware ? (
                    <Link href={versionHref(model.modelId, v.firmware) as never} style={[type.mono, linkTarget, { paddingVertical: (touchTarget - 20) / 2, color: colors.slateInk, textDecorationLine: 'underline' }]}>
                      {v.firmware}
                    </Link>
                  ) : (
                    <Text style={type.mono}>not reported</Text>
                  )}
                </View>
                {model.boards.map((b) => (
                  <Text role="cell" key={b} style={[type.dense, styles.num, !v.byBoard[b] && { color: colors.inkFaint }]}>
                    {v.byBoard[b] ?? 0}
                  </Text>
                ))}
                <Text role="cell" style={[type.dense, styles.num, { fontFamily: fonts.semibold }]}>
                  {v.total}
                </Text>
              </View>
            ))}
          </View>
        </ScrollView>
      </Card>

      <Card>
        <Text style={type.label}>Versions on each board</Text>
        <StackedBarChart
          label={`${model.modelName}: versions on each board`}
          data={{
            groups: model.boards.map((b) => `Board ${b}`),
            series: model.versions.map((v) => ({ label: v.firmware ?? 'not reported', values: model.boards.map((b) => v.byBoard[b] ?? 0) })),
          }}
        />
      </Card>

      <Card>
        <Text style={type.label}>Adoption over time (installs confirmed, running total per day)</Text>
        {release ? (
          <>
            <Choices choices={withAdoption.map((r) => ({ value: r.id, label: `${r.version} · ${r.channel}` }))} value={release.id} onChange={setReleaseId} />
            <DayLineChart
              label={`Adoption of ${release.version}`}
              points={release.adoption.map((d) => ({ label: d.day.slice(5), value: d.cumulative }))}
              color={colors.moss}
            />
            <Text style={type.small}>
              {release.adoption[release.adoption.length - 1]?.cumulative ?? 0} installed since {release.startedAt ? release.startedAt.slice(0, 10) : 'the start'} · {release.state}
              {'  '}
              <Text role="link" style={{ color: colors.slate, textDecorationLine: 'underline' }} onPress={() => onOpenRelease(release.id)}>
                Open release
              </Text>
            </Text>
          </>
        ) : (
          <Text style={type.small}>No release of this model has started yet.</Text>
        )}
      </Card>
    </View>
  );
}

const styles = StyleSheet.create({
  tr: { flexDirection: 'row', alignItems: 'center', minHeight: 36, borderBottomColor: colors.line, borderBottomWidth: 1, gap: space.sm },
  thead: { backgroundColor: colors.paperDeep },
  firstCol: { width: 120, paddingLeft: space.sm },
  num: { width: 72, textAlign: 'right', fontVariant: ['tabular-nums'], paddingRight: space.sm },
});
