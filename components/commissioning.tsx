// The first-readings check on screen (the logger page's card) and the one-page commissioning sheet: what was
// installed, how it was wired, the measurement profile, the first readings and the check's verdict, the photo,
// who enrolled it and when (site time), and the cautions. The sheet prints on one A4 page through a print
// stylesheet and a plain-HTML copy outside the app's root (as the label sheet does), so "Print" or "Save as
// PDF" in the browser gives the sheet alone. In the spirit of IEC 62446-1's documentation and commissioning
// records (docs/SOURCES.md §15) — a record of the logger, not of the PV system.
import React from 'react';
import { Image, Pressable, StyleSheet, Text, View } from 'react-native';
import { Link } from 'expo-router';
import { createPortal } from 'react-dom';
import { Page } from './shell';
import { Badge, Button, Card, Notice, Row } from './ui';
import { COMMISSIONING_ITEM_WORDS, COMMISSIONING_STATE_WORDS } from './words';
import { formatCurrent, formatPower } from './calibration-preview';
import { wiringCautionLines } from './wiring-cautions';
import { isWeb, useGlobalStyle, usePrintHost } from './web';
import { colors, fonts, radii, space, toneColors, type } from './theme';
import { siteDateTime, utcDateTime } from '../lib/site-time';
import { probeStepText, type ModelLimits } from '../lib/calibration';
import { FIRST_READINGS_COUNTED, type FirstReading, type ItemResult } from '../lib/commissioning';
import type { Commissioning, LoggerDetail } from '../hooks/loggers';
import type { ApiError } from '../hooks/api';

const asApi = (e: unknown) => e as (ApiError & Error) | null;

/** Where the sheet lives. */
export const commissioningSheetHref = (loggerId: string) => `/loggers/${loggerId}/commissioning`;

// ─── Words shared by the card, the sheet and its printed copy ───────────────

const num = (x: number, digits = 6) => String(Number(x.toPrecision(digits)));
const signed = (x: number) => (x < 0 ? `−${num(-x)}` : num(x));

export function readingCells(r: FirstReading): { busV: string; currentA: string; powerW: string; tempC: string } {
  const or = (x: number | null, unit: string) => (x === null ? 'not reported' : `${signed(x)} ${unit}`);
  return { busV: or(r.busV, 'V'), currentA: or(r.currentA, 'A'), powerW: or(r.powerW, 'W'), tempC: or(r.tempC, '°C') };
}

/** "2 of 3 first readings in" while it waits. */
function waitingWords(view: Commissioning): string {
  const n = view.readings.length;
  return `${n} of ${FIRST_READINGS_COUNTED} first readings in`;
}

/** One failed item in plain words: what failed at which check-in, and what to look at. */
function failureLines(item: ItemResult): string[] {
  return item.failures.map((f) => `Check-in ${f.reading}: ${f.found} — ${f.why}`);
}

function siteTimeText(at: string, timeZone: string | undefined): string {
  return timeZone ? `${siteDateTime(at, timeZone)} (${utcDateTime(at)})` : utcDateTime(at);
}

// ─── The logger page's card ─────────────────────────────────────────────────

export function CommissioningCard({
  loggerId,
  view,
  restart,
}: {
  loggerId: string;
  view: Commissioning | undefined;
  restart: { busy: boolean; error: unknown; run: () => void };
}) {
  if (!view) return null;
  const word = COMMISSIONING_STATE_WORDS[view.state];
  const failed = view.verdict?.items.filter((i) => !i.ok) ?? [];
  return (
    <Card testID="commissioning">
      <Row wrap style={{ justifyContent: 'space-between' }}>
        <Text style={type.heading}>First readings</Text>
        <Badge label={word.label} tone={word.tone} testID="commissioning-state" />
      </Row>
      {view.state === 'passed' ? (
        <Text style={type.body} testID="commissioning-verdict">
          Commissioning check passed: its first {view.readings.length} readings agree with its wiring.
        </Text>
      ) : view.state === 'failed' ? (
        <View style={{ gap: space.md }} testID="commissioning-verdict">
          {failed.map((item) => (
            <View key={item.item} style={styles.failure}>
              <Text style={[type.body, { fontFamily: fonts.semibold }]}>{COMMISSIONING_ITEM_WORDS[item.item]}</Text>
              {failureLines(item).map((line) => (
                <Text key={line} style={type.body}>
                  {line}
                </Text>
              ))}
              <Text style={type.body}>
                <Text style={{ fontFamily: fonts.semibold }}>What to look at: </Text>
                {item.lookAt}
              </Text>
            </View>
          ))}
        </View>
      ) : (
        <Text style={type.body} testID="commissioning-verdict">
          {view.problem ?? `Waiting: ${waitingWords(view)}. The console compares the first ${FIRST_READINGS_COUNTED} check-ins made with its measurement profile against its wiring.`}
        </Text>
      )}
      <Row wrap gap={space.sm} style={{ alignItems: 'center' }}>
        <Link href={commissioningSheetHref(loggerId) as never} asChild>
          <Pressable role="link" style={styles.link} testID="open-commissioning-sheet">
            <Text style={[type.body, { fontFamily: fonts.semibold, textDecorationLine: 'underline' }]}>Commissioning sheet</Text>
          </Pressable>
        </Link>
        {view.can.restart && (view.startedAt === null || view.readings.length > 0) ? (
          <Button
            label={view.startedAt === null ? 'Start the check' : 'Start the check again'}
            variant="secondary"
            busy={restart.busy}
            onPress={restart.run}
            testID="commissioning-restart"
          />
        ) : null}
      </Row>
      {view.can.restart && view.state === 'failed' ? (
        <Text style={type.small}>After fixing the wiring, start the check again: the next {FIRST_READINGS_COUNTED} check-ins are judged anew.</Text>
      ) : null}
      {restart.error ? <Notice title={asApi(restart.error)!.title} detail={asApi(restart.error)!.detail} /> : null}
    </Card>
  );
}

// ─── The sheet ──────────────────────────────────────────────────────────────

type Rows = [label: string, value: string][];
type SheetData = {
  identity: Rows;
  wiring: Rows;
  profile: Rows;
  vocNote: string | null;
  readings: (ReturnType<typeof readingCells> & { at: string })[];
  verdict: { label: string; tone: keyof typeof toneColors; items: { name: string; rule: string; ok: boolean; lines: string[]; lookAt: string | null }[]; note: string | null };
  cautions: string[];
};

/** The sheet's content, once, for the screen and its printed copy. */
export function sheetData(logger: LoggerDetail, view: Commissioning, limits: ModelLimits | undefined, wide: boolean): SheetData {
  const tz = logger.site?.timeZone;
  const at = (iso: string) => (tz ? (wide ? siteTimeText(iso, tz) : siteDateTime(iso, tz)) : utcDateTime(iso));
  const p = logger.profile;
  const f = view.figures;
  const word = COMMISSIONING_STATE_WORDS[view.state];
  return {
    identity: [
      ['Site', logger.site ? `${logger.site.name} (${logger.site.customer})` : 'not installed'],
      ['Logger serial', logger.serial],
      ['Model and board', `${logger.modelName}, board ${logger.board}`],
      ['Enrolled by', logger.enrolledBy?.name ?? '—'],
      ['Enrolled', logger.enrolledAt ? at(logger.enrolledAt) : '—'],
    ],
    wiring: [
      ['Panel rating', logger.install?.panelWp != null ? `${logger.install.panelWp} Wp` : '—'],
      ['Panel open-circuit voltage', logger.install?.panelVocV != null ? `${logger.install.panelVocV} V` : '—'],
      ['Voltage change with temperature', logger.install?.vocTempCoeffPctPerC != null ? `${signed(logger.install.vocTempCoeffPctPerC)} %/°C` : 'not given'],
      ["Site's lowest temperature", logger.site?.minTempC != null ? `${signed(logger.site.minTempC)} °C` : 'not given'],
      ['Highest panel voltage (cold)', f ? `${num(f.vocMaxV)} V` : '—'],
      ['Shunt', p ? `${Number((p.shuntOhm * 1000).toPrecision(6))} mΩ` : '—'],
      ['Maximum current', p ? `${p.maxCurrentA} A` : '—'],
    ],
    profile: p
      ? [
          ['Version', String(p.version)],
          ['Calibration', String(p.calibration)],
          ['Current step', formatCurrent(p.currentLsbA)],
          ['Power step', formatPower(p.powerLsbW)],
          ['Panel voltage limit', `${p.busVMax} V`],
          ['Temperature in', probeStepText(p.tempResolutionBits)],
          ['Sample every', `${p.sampleIntervalS} s`],
        ]
      : [['Profile', 'none yet']],
    vocNote: f?.vocNote ?? null,
    readings: view.readings.map((r) => ({ at: at(r.at), ...readingCells(r) })),
    verdict: {
      label: word.label,
      tone: word.tone,
      items: (view.verdict?.items ?? []).map((i) => ({
        name: COMMISSIONING_ITEM_WORDS[i.item],
        rule: i.rule,
        ok: i.ok,
        lines: failureLines(i),
        lookAt: i.lookAt,
      })),
      note:
        view.state === 'waiting'
          ? view.problem ?? `Waiting: ${waitingWords(view)}.`
          : view.judgedAt
            ? `Judged ${at(view.judgedAt)} on the first ${view.readings.length} check-ins made with profile version ${f?.profileVersion ?? '—'}.`
            : null,
    },
    cautions: wiringCautionLines(limits),
  };
}

const PRINT_ROOT = 'heliodor-commissioning-print';
const printCss = `
#${PRINT_ROOT} { display: none; }
@media print {
  @page { size: A4; margin: 10mm; }
  html, body { background: ${colors.surface} !important; height: auto !important; overflow: visible !important; }
  body > *:not(#${PRINT_ROOT}) { display: none !important; }
  #${PRINT_ROOT} { display: block !important; color: ${colors.ink}; font-family: IBMPlexSans_400Regular, sans-serif; font-size: 8.5pt; line-height: 1.3; }
  #${PRINT_ROOT} .hc-sheet { width: 190mm; height: 276mm; overflow: hidden; break-inside: avoid; page-break-inside: avoid; }
  #${PRINT_ROOT} h1 { font-family: IBMPlexSans_600SemiBold, sans-serif; font-size: 14pt; margin: 0 0 1mm; }
  #${PRINT_ROOT} h2 { font-family: IBMPlexSans_600SemiBold, sans-serif; font-size: 9.5pt; margin: 3mm 0 1mm; border-bottom: 0.3mm solid ${colors.line}; padding-bottom: 0.5mm; }
  #${PRINT_ROOT} .hc-sub { color: ${colors.inkSoft}; margin: 0; }
  #${PRINT_ROOT} .hc-cols { display: flex; gap: 6mm; }
  #${PRINT_ROOT} .hc-col { flex: 1; min-width: 0; }
  #${PRINT_ROOT} table { border-collapse: collapse; width: 100%; }
  #${PRINT_ROOT} td, #${PRINT_ROOT} th { text-align: left; vertical-align: top; padding: 0.4mm 1.5mm 0.4mm 0; }
  #${PRINT_ROOT} th { font-family: IBMPlexSans_500Medium, sans-serif; color: ${colors.inkSoft}; font-weight: normal; }
  #${PRINT_ROOT} .hc-kv th { width: 45%; }
  #${PRINT_ROOT} .hc-num { font-family: IBMPlexMono_400Regular, monospace; }
  #${PRINT_ROOT} .hc-verdict { display: inline-block; font-family: IBMPlexSans_600SemiBold, sans-serif; padding: 0.5mm 2mm; border-radius: 1mm; }
  #${PRINT_ROOT} .hc-photo { max-width: 60mm; max-height: 45mm; object-fit: cover; }
  #${PRINT_ROOT} ul { margin: 0; padding-left: 4mm; }
  #${PRINT_ROOT} .hc-foot { color: ${colors.inkSoft}; font-size: 7.5pt; margin-top: 2mm; }
}`;

const STANDARD_NOTE =
  'Kept in the spirit of the documentation and commissioning records of IEC 62446-1: a record of the logger, not a commissioning record of the PV system, which local codes and licensed practice govern.';

/** The printed copy: plain HTML outside the app's root, so the print stylesheet can hide everything else. */
function PrintedSheet({ data, title, photoUrl }: { data: SheetData; title: string; photoUrl: string | null }) {
  const host = usePrintHost(PRINT_ROOT);
  if (!host) return null;
  const tone = toneColors[data.verdict.tone];
  const kv = (rows: Rows) => (
    <table className="hc-kv">
      <tbody>
        {rows.map(([k, v]) => (
          <tr key={k}>
            <th>{k}</th>
            <td>{v}</td>
          </tr>
        ))}
      </tbody>
    </table>
  );
  return createPortal(
    <div className="hc-sheet" data-testid="printed-sheet">
      <h1>{title}</h1>
      <p className="hc-sub">Heliodor commissioning sheet</p>
      <div className="hc-cols">
        <div className="hc-col">
          <h2>Logger and site</h2>
          {kv(data.identity)}
          <h2>Wiring figures</h2>
          {kv(data.wiring)}
          {data.vocNote ? <p className="hc-sub">{data.vocNote}</p> : null}
        </div>
        <div className="hc-col">
          <h2>Measurement profile</h2>
          {kv(data.profile)}
          {photoUrl ? (
            <>
              <h2>Install photo</h2>
              <img className="hc-photo" src={photoUrl} alt="Install photo" />
            </>
          ) : null}
        </div>
      </div>
      <h2>First readings</h2>
      {data.readings.length ? (
        <table>
          <thead>
            <tr>
              <th>Check-in</th>
              <th>At (site time)</th>
              <th>Panel voltage</th>
              <th>Current</th>
              <th>Power</th>
              <th>Temperature probe</th>
            </tr>
          </thead>
          <tbody>
            {data.readings.map((r, i) => (
              <tr key={i}>
                <td>{i + 1}</td>
                <td>{r.at}</td>
                <td className="hc-num">{r.busV}</td>
                <td className="hc-num">{r.currentA}</td>
                <td className="hc-num">{r.powerW}</td>
                <td className="hc-num">{r.tempC}</td>
              </tr>
            ))}
          </tbody>
        </table>
      ) : (
        <p>No readings yet.</p>
      )}
      <h2>Check</h2>
      <p>
        <span className="hc-verdict" style={{ color: tone.fg, background: tone.bg }}>
          {data.verdict.label}
        </span>{' '}
        {data.verdict.note}
      </p>
      <table>
        <tbody>
          {data.verdict.items.map((i) => (
            <tr key={i.name}>
              <th>{i.name}</th>
              <td>{i.rule}</td>
              <td>
                {i.ok ? 'ok' : i.lines.join('; ')}
                {i.lookAt ? ` — What to look at: ${i.lookAt}` : ''}
              </td>
            </tr>
          ))}
        </tbody>
      </table>
      <h2>Cautions</h2>
      <ul>
        {data.cautions.map((c) => (
          <li key={c}>{c}</li>
        ))}
      </ul>
      <p className="hc-foot">{STANDARD_NOTE}</p>
    </div>,
    host,
  );
}

function KeyValues({ rows, testID }: { rows: Rows; testID?: string }) {
  return (
    <View style={styles.grid} testID={testID}>
      {rows.map(([k, v]) => (
        <View key={k} style={styles.item}>
          <Text style={type.label}>{k}</Text>
          <Text style={type.body}>{v}</Text>
        </View>
      ))}
    </View>
  );
}

export function CommissioningSheet({
  logger,
  view,
  limits,
  photoUrl,
  wide,
}: {
  logger: LoggerDetail;
  view: Commissioning;
  limits: ModelLimits | undefined;
  photoUrl: string;
  wide: boolean;
}) {
  useGlobalStyle('heliodor-commissioning-print-css', printCss);
  const data = sheetData(logger, view, limits, wide);
  const printed = sheetData(logger, view, limits, true);
  const title = `Commissioning sheet · ${logger.serial}`;
  const tone = toneColors[data.verdict.tone];
  return (
    <Page
      title="Commissioning sheet"
      subtitle={`${logger.serial}${logger.site ? ` at ${logger.site.name}` : ''}`}
      actions={
        <>
          <Button label="Print or save as PDF" onPress={() => isWeb && window.print()} testID="print-sheet" />
          <Link href={`/loggers/${logger.id}` as never} asChild>
            <Pressable role="link" style={styles.link}>
              <Text style={[type.body, { fontFamily: fonts.semibold, textDecorationLine: 'underline' }]}>Back to the logger</Text>
            </Pressable>
          </Link>
        </>
      }
    >
      <Card testID="sheet-verdict">
        <Row wrap style={{ justifyContent: 'space-between' }}>
          <Text style={type.heading}>Check</Text>
          <Badge label={data.verdict.label} tone={data.verdict.tone} />
        </Row>
        {data.verdict.note ? <Text style={type.small}>{data.verdict.note}</Text> : null}
        <View style={{ gap: space.sm }}>
          {data.verdict.items.map((i) => (
            <View key={i.name} style={[styles.itemRow, !i.ok && { borderLeftColor: tone.fg }]}>
              <Text style={[type.body, { fontFamily: fonts.semibold }]}>
                {i.name}: {i.ok ? 'ok' : 'failed'}
              </Text>
              <Text style={type.small}>{i.rule}</Text>
              {i.lines.map((l) => (
                <Text key={l} style={type.body}>
                  {l}
                </Text>
              ))}
              {i.lookAt ? <Text style={type.body}>What to look at: {i.lookAt}</Text> : null}
            </View>
          ))}
        </View>
      </Card>
      <View style={styles.columns}>
        <Card style={styles.col}>
          <Text style={type.heading}>Logger and site</Text>
          <KeyValues rows={data.identity} testID="sheet-identity" />
        </Card>
        <Card style={styles.col}>
          <Text style={type.heading}>Wiring figures</Text>
          <KeyValues rows={data.wiring} testID="sheet-wiring" />
          {data.vocNote ? <Text style={type.small}>{data.vocNote}</Text> : null}
        </Card>
      </View>
      <Card>
        <Text style={type.heading}>Measurement profile</Text>
        <KeyValues rows={data.profile} testID="sheet-profile" />
      </Card>
      <Card testID="sheet-readings">
        <Text style={type.heading}>First readings</Text>
        {data.readings.length === 0 ? <Text style={type.body}>No readings yet.</Text> : null}
        {data.readings.map((r, i) => (
          <View key={i} style={styles.reading}>
            <Text style={type.label}>
              Check-in {i + 1} · {r.at}
            </Text>
            <Text style={type.mono}>
              {r.busV} · {r.currentA} · {r.powerW} · {r.tempC}
            </Text>
          </View>
        ))}
      </Card>
      {logger.install?.photo ? (
        <Card>
          <Text style={type.heading}>Install photo</Text>
          <Image source={{ uri: photoUrl }} style={styles.photo} resizeMode="cover" accessibilityLabel="Install photo" />
        </Card>
      ) : null}
      <Notice title="Cautions" tone="amber">
        {data.cautions.map((c) => (
          <Text key={c} style={type.body}>
            • {c}
          </Text>
        ))}
      </Notice>
      <Text style={type.small}>{STANDARD_NOTE}</Text>
      {isWeb ? <PrintedSheet data={printed} title={title} photoUrl={logger.install?.photo ? photoUrl : null} /> : null}
    </Page>
  );
}

const styles = StyleSheet.create({
  link: { minHeight: 44, justifyContent: 'center', paddingHorizontal: space.xs },
  failure: { gap: 2, borderLeftWidth: 3, borderLeftColor: colors.ember, paddingLeft: space.md },
  columns: { flexDirection: 'row', flexWrap: 'wrap', gap: space.lg },
  col: { flexGrow: 1, flexBasis: 320 },
  grid: { flexDirection: 'row', flexWrap: 'wrap', columnGap: space.lg, rowGap: space.md },
  item: { minWidth: 140, flexBasis: 140, flexGrow: 1, gap: 2 },
  itemRow: { gap: 2, borderLeftWidth: 3, borderLeftColor: colors.line, paddingLeft: space.md },
  reading: { gap: 2, paddingVertical: space.xs, borderBottomWidth: 1, borderBottomColor: colors.line },
  photo: { width: '100%', maxWidth: 480, height: 260, borderRadius: radii.md, backgroundColor: colors.paperDeep },
});
