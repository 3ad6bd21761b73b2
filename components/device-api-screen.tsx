// Settings → Device API: the contract with logger firmware as a firmware developer reads it — the two
// endpoints with example requests and answers, the statuses, and the choices this server made where
// DEVICE_API.md leaves room. The OpenAPI document itself is one tap away.
import React from 'react';
import { ScrollView, StyleSheet, Text, View } from 'react-native';
import { Page } from './shell';
import { Badge, Body, Button, Card, Row } from './ui';
import { colors, fonts, radii, space, type } from './theme';
import { deviceApiChoices } from '../schemas/device';
import {
  checkInCurl,
  downloadCurl,
  exampleAnswer,
  exampleCheckInWithReport,
  exampleProblem,
  exampleQuietAnswer,
  exampleRangeAnswer,
  statuses,
} from './device-api-examples';

type Props = {
  /** Where the console is served, for copy-paste examples (e.g. https://console.fernhollow.example). */
  origin: string;
  wide: boolean;
  onOpenDocument: () => void;
};

export const OPENAPI_PATH = '/api/device/v1/openapi.json';

function Code({ text, label }: { text: string; label: string }) {
  return (
    <View style={styles.codeWrap} accessibilityLabel={label}>
      <ScrollView horizontal tabIndex={0} aria-label={label} contentContainerStyle={styles.codeScroll}>
        <Text selectable style={styles.code}>
          {text}
        </Text>
      </ScrollView>
    </View>
  );
}

function Endpoint({ method, path, summary }: { method: 'GET' | 'POST'; path: string; summary: string }) {
  return (
    <View style={{ gap: space.xs }}>
      <Row wrap>
        <Badge label={method} tone={method === 'POST' ? 'amber' : 'moss'} />
        <Text selectable style={[type.mono, { fontFamily: fonts.monoMedium, flexShrink: 1 }]}>
          {path}
        </Text>
      </Row>
      <Body muted>{summary}</Body>
    </View>
  );
}

function Label({ children }: { children: string }) {
  return (
    <Text role="heading" aria-level={3} style={[type.label, { marginTop: space.sm }]}>
      {children}
    </Text>
  );
}

const json = (value: unknown) => JSON.stringify(value, null, 2);

export function DeviceApiScreen({ origin, wide, onOpenDocument }: Props) {
  return (
    <Page
      title="Device API"
      subtitle="Settings · version 1, the contract with logger firmware"
      actions={<Button label="Open OpenAPI document" variant="secondary" onPress={onOpenDocument} accessibilityHint={`Opens ${OPENAPI_PATH}`} />}
    >
      <Card>
        <Text role="heading" aria-level={2} style={type.heading}>
          Authentication
        </Text>
        <Body>
          Every request carries the logger’s own token: <Text style={styles.inlineMono}>Authorization: Bearer hlt_…</Text> — the prefix and 43
          base64url characters, as printed on its label or bench sheet. The console keeps only its SHA-256. A rotated, revoked or retired token
          answers 401. Fields may be added to this contract, never renamed or removed; unknown request fields are ignored.
        </Body>
      </Card>

      <View style={wide ? styles.columns : styles.stack}>
        <Card style={wide ? styles.column : undefined}>
          <Endpoint
            method="POST"
            path="/api/device/v1/check-in"
            summary="Report what runs and what was measured; get the time, when to come back, the measurement profile if it changed, and the update to install now."
          />
          <Label>Request</Label>
          <Code label="Example check-in with curl" text={checkInCurl(origin)} />
          <Label>Body with an install report</Label>
          <Code label="Example check-in body with an install report" text={json(exampleCheckInWithReport)} />
          <Label>Answer with an offer</Label>
          <Code label="Example answer with an offer" text={json(exampleAnswer)} />
          <Body muted>
            Check the signature over the exact manifest bytes with a key the firmware holds (key_id), then the image’s SHA-256 and size against
            the manifest, before installing.
          </Body>
          <Label>Answer with nothing to do</Label>
          <Code label="Example answer without an offer" text={json(exampleQuietAnswer)} />
        </Card>

        <Card style={wide ? styles.column : undefined}>
          <Endpoint
            method="GET"
            path="/api/device/v1/images/{sha256}"
            summary="Download the offered image. Resumable: ask for the rest with Range and the ETag in If-Range, and the image is never spliced from two versions."
          />
          <Label>Download and resume</Label>
          <Code label="Example download resumed with curl" text={downloadCurl(origin)} />
          <Label>Answer to a resumed request</Label>
          <Code label="Example 206 answer headers" text={exampleRangeAnswer} />
          <Label>Errors (application/problem+json)</Label>
          <Code label="Example problem details" text={json(exampleProblem)} />
        </Card>
      </View>

      <Card>
        <Text role="heading" aria-level={2} style={type.heading}>
          Statuses
        </Text>
        <View role="list" style={{ gap: space.xs }}>
          {statuses.map((s) => (
            <View role="listitem" key={s.status} style={styles.statusRow}>
              <Text style={[type.mono, styles.statusCode]}>{s.status}</Text>
              <Text style={[type.dense, { flex: 1 }]}>{s.when}</Text>
            </View>
          ))}
        </View>
        <Body muted>429 and 503 carry Retry-After in seconds: wait that long, plus a little jitter of your own.</Body>
      </Card>

      <Card>
        <Text role="heading" aria-level={2} style={type.heading}>
          Where the contract leaves room
        </Text>
        <Body muted>What this server does; the OpenAPI document states the same.</Body>
        <View role="list" style={{ gap: space.sm }}>
          {deviceApiChoices.map((c) => (
            <View role="listitem" key={c} style={styles.choice}>
              <View style={styles.bullet} />
              <Text style={[type.dense, { flex: 1 }]}>{c.replace(/`/g, '')}</Text>
            </View>
          ))}
        </View>
      </Card>
    </Page>
  );
}

const styles = StyleSheet.create({
  columns: { flexDirection: 'row', gap: space.lg, alignItems: 'flex-start' },
  column: { flex: 1, minWidth: 0 },
  stack: { gap: space.lg },
  codeWrap: { backgroundColor: colors.paperDeep, borderRadius: radii.sm, borderColor: colors.line, borderWidth: 1 },
  codeScroll: { padding: space.md },
  code: { fontFamily: fonts.mono, fontSize: 13, lineHeight: 19, color: colors.ink },
  inlineMono: { fontFamily: fonts.mono, fontSize: 14 },
  statusRow: { flexDirection: 'row', gap: space.md, alignItems: 'flex-start', paddingVertical: 2 },
  statusCode: { width: 40, fontFamily: fonts.monoMedium },
  choice: { flexDirection: 'row', gap: space.sm, alignItems: 'flex-start' },
  bullet: { width: 6, height: 6, borderRadius: 3, backgroundColor: colors.heliodor, marginTop: 8 },
});
