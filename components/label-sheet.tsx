// The screen that shows freshly issued tokens once: label previews, a printable A4 sheet (24 up, layout
// from lib/label-sheet.ts), the bench sheet CSV, and a plain warning that none of it comes back.
import React from 'react';
import { Image, StyleSheet, Text, View } from 'react-native';
import { createPortal } from 'react-dom';
import { Button, Card, Notice, ProgressBar, Row } from './ui';
import { colors, fonts, space, type } from './theme';
import { enrollmentLink, labelSheet, labelSheetLayout } from '../lib/label-sheet';
import { qrDataUrl } from './qr-art';
import { benchSheetCsv, benchSheetName, type BenchRow } from './bench-sheet';
import { downloadText, isWeb, useGlobalStyle, usePrintHost } from './web';

export type SheetToken = BenchRow & { id?: string; channel?: string };

const PRINT_ROOT = 'heliodor-print';
const printCss = `
#${PRINT_ROOT} { display: none; }
@media print {
  @page { size: A4; margin: 0; }
  html, body { background: ${colors.surface} !important; height: auto !important; overflow: visible !important; }
  body > *:not(#${PRINT_ROOT}) { display: none !important; }
  #${PRINT_ROOT} { display: block !important; }
  #${PRINT_ROOT} .hp-page { position: relative; width: ${labelSheet.pageWidthMm}mm; height: ${labelSheet.pageHeightMm}mm; overflow: hidden; break-after: page; page-break-after: always; }
  #${PRINT_ROOT} .hp-page:last-child { break-after: auto; page-break-after: auto; }
  #${PRINT_ROOT} .hp-label { position: absolute; box-sizing: border-box; display: flex; align-items: center; gap: 1.5mm; padding: 1.5mm; overflow: hidden; color: ${colors.ink}; font-family: IBMPlexSans_400Regular, sans-serif; }
  #${PRINT_ROOT} .hp-label img { width: 29mm; height: 29mm; flex: none; }
  #${PRINT_ROOT} .hp-serial { font-family: IBMPlexMono_500Medium, monospace; font-size: 10pt; font-weight: 600; word-break: break-all; }
  #${PRINT_ROOT} .hp-detail { font-size: 7.5pt; line-height: 1.25; }
}`;

/** Draws the QR codes a few at a time so a 5 000-label batch does not freeze the page. */
function useQrImages(links: string[]) {
  const [images, setImages] = React.useState<string[]>([]);
  React.useEffect(() => {
    let cancelled = false;
    const out: string[] = [];
    setImages([]);
    const step = () => {
      if (cancelled) return;
      const end = Math.min(links.length, out.length + 100);
      for (let i = out.length; i < end; i++) out.push(qrDataUrl(links[i]));
      setImages([...out]);
      if (out.length < links.length) setTimeout(step, 0);
    };
    step();
    return () => {
      cancelled = true;
    };
  }, [links]);
  return images;
}

export function TokenSheet({
  tokens,
  origin,
  title,
  onDone,
}: {
  tokens: SheetToken[];
  origin: string;
  title: string;
  onDone: () => void;
}) {
  const links = React.useMemo(() => tokens.map((t) => enrollmentLink(origin, t.token)), [tokens, origin]);
  const images = useQrImages(links);
  const drawn = images.length;
  const ready = drawn === tokens.length;
  const [page, setPage] = React.useState(0);
  const [downloaded, setDownloaded] = React.useState(false);
  const layout = React.useMemo(() => labelSheetLayout(tokens.length), [tokens.length]);
  useGlobalStyle('heliodor-print-css', printCss);

  const perPage = layout.perPage;
  const pageCount = Math.max(1, layout.pageCount);
  const shown = tokens.slice(page * perPage, (page + 1) * perPage);

  const download = () => {
    downloadText(benchSheetName(), benchSheetCsv(tokens));
    setDownloaded(true);
  };

  return (
    <View style={{ gap: space.lg }} testID="token-sheet">
      <Notice title="These tokens are shown only now" tone="ember">
        <Text style={type.body}>
          Heliodor keeps only a fingerprint of each token, so these labels and the bench sheet cannot be shown again. Print the labels and
          download the bench sheet before you leave this screen. A lost label means rotating its token.
        </Text>
      </Notice>
      <Row wrap gap={space.sm}>
        <Button label="Print labels" onPress={() => isWeb && window.print()} disabled={!ready} testID="print-labels" />
        <Button label="Download bench sheet (CSV)" variant="secondary" onPress={download} testID="download-bench-sheet" />
        <Button label="Done" variant="quiet" onPress={onDone} testID="sheet-done" />
      </Row>
      {downloaded ? <Text style={type.small}>Bench sheet saved: {tokens.length} {tokens.length === 1 ? 'row' : 'rows'} (serial, token, model, board).</Text> : null}
      {!ready ? <ProgressBar value={(drawn / Math.max(1, tokens.length)) * 100} label={`Drawing labels: ${drawn} of ${tokens.length}`} /> : null}

      <View style={{ gap: space.sm }}>
        <Row wrap style={{ justifyContent: 'space-between' }}>
          <Text style={type.heading}>{title}</Text>
          <Text style={type.small}>
            {tokens.length} {tokens.length === 1 ? 'label' : 'labels'} · {pageCount} A4 {pageCount === 1 ? 'page' : 'pages'} of {perPage}
          </Text>
        </Row>
        <View style={styles.grid}>
          {shown.map((t, i) => (
            <LabelCard key={t.serial} token={t} image={images[page * perPage + i]} />
          ))}
        </View>
        {pageCount > 1 ? (
          <Row gap={space.sm} style={{ justifyContent: 'center' }}>
            <Button label="Previous page" variant="secondary" disabled={page === 0} onPress={() => setPage(page - 1)} />
            <Text style={type.small}>
              Page {page + 1} of {pageCount}
            </Text>
            <Button label="Next page" variant="secondary" disabled={page + 1 >= pageCount} onPress={() => setPage(page + 1)} />
          </Row>
        ) : null}
      </View>
      {isWeb && ready ? <PrintSheet tokens={tokens} images={images} layout={layout} /> : null}
    </View>
  );
}

function LabelCard({ token, image }: { token: SheetToken; image?: string }) {
  return (
    <Card style={styles.label} testID="label">
      {image ? <Image source={{ uri: image }} style={styles.qr} accessibilityLabel={`QR code for ${token.serial}`} /> : <View style={[styles.qr, { backgroundColor: colors.paperDeep }]} />}
      <View style={{ flexShrink: 1, gap: 2 }}>
        <Text style={[type.mono, { fontFamily: fonts.monoMedium, fontSize: 15 }]} selectable>
          {token.serial}
        </Text>
        <Text style={type.small}>{token.modelName}</Text>
        <Text style={type.small}>Board {token.board}</Text>
      </View>
    </Card>
  );
}

/** The A4 pages, rendered outside the app's root so print CSS can hide everything else. */
function PrintSheet({ tokens, images, layout }: { tokens: SheetToken[]; images: string[]; layout: ReturnType<typeof labelSheetLayout> }) {
  const host = usePrintHost(PRINT_ROOT);
  if (!host) return null;
  const pages = Array.from({ length: layout.pageCount }, (_, p) => layout.cells.filter((c) => c.page === p));
  return createPortal(
    <>
      {pages.map((cells, p) => (
        <div className="hp-page" key={p}>
          {cells.map((c) => {
            const t = tokens[c.index];
            return (
              <div
                className="hp-label"
                key={t.serial}
                style={{ left: `${c.xMm}mm`, top: `${c.yMm}mm`, width: `${c.widthMm}mm`, height: `${c.heightMm}mm` }}
              >
                <img src={images[c.index]} alt="" />
                <div>
                  <div className="hp-serial">{t.serial}</div>
                  <div className="hp-detail">{t.modelName}</div>
                  <div className="hp-detail">Board {t.board}</div>
                </div>
              </div>
            );
          })}
        </div>
      ))}
    </>,
    host,
  );
}

const styles = StyleSheet.create({
  grid: { flexDirection: 'row', flexWrap: 'wrap', gap: space.sm },
  label: { flexDirection: 'row', alignItems: 'center', gap: space.md, padding: space.sm, flexGrow: 1, flexBasis: 280, maxWidth: 420 },
  qr: { width: 104, height: 104 },
});
