// Enrollment on a phone: scan (or type) the label, pick or create the site, enter the install details,
// see the measurement profile as it will be computed, enroll. Presentational: the route passes data in.
import React from 'react';
import { Image, Pressable, StyleSheet, Text, View } from 'react-native';
import { Link } from 'expo-router';
import { z } from 'zod';
import { Page } from './shell';
import { Badge, Button, Card, EmptyState, Field, Mono, Notice, ProgressBar, Row, Skeleton } from './ui';
import { decimal, decimalText, FieldMessage, FormChoices, FormField, formSchema, useSchemaForm, useServerErrors, whenValid } from './form';
import { QrScanner, type ScannerProblem } from './qr-scanner';
import { readEnrollmentCode } from './enroll-code';
import { CalibrationPreview, liveProfile, withProfileCheck } from './calibration-preview';
import { SiteForm } from './site-form';
import { WiringCautions, vocCoeffField } from './wiring-cautions';
import { loggerStatus } from './status';
import { pickFile } from './web';
import { colors, fonts, radii, space, touchTarget, type } from './theme';
import type { ApiError } from '../hooks/api';
import type { EnrollInput, Lookup } from '../hooks/loggers';
import type { QueuedEnrollment } from '../hooks/enrollment-queue';
import type { Enrolled } from '../schemas/loggers';
import { commissioningSheetHref } from './commissioning';
import { FIRST_READINGS_COUNTED } from '../lib/commissioning';
import type { Site, SiteInput } from '../hooks/sites';
import { enrollRequest } from '../schemas/loggers';
import type { InstallForProfile, ProfileError } from '../lib/calibration';
import { probeStepChoice } from '../lib/calibration';

const errorOf = (e: unknown) => e as (ApiError & Error) | null;

function ProblemNotice({ error, fallback }: { error: unknown; fallback: string }) {
  const e = errorOf(error);
  if (!e) return null;
  return <Notice title={e.title ?? fallback} detail={e.detail ?? e.message} />;
}

// ─── Step 1: the label ───────────────────────────────────────────────────────

export function EnrollScan({
  busy,
  error,
  onToken,
  children,
}: {
  busy: boolean;
  error: unknown;
  onToken: (token: string) => void;
  /** Shown above the camera: the enrollments kept on this phone. */
  children?: React.ReactNode;
}) {
  const [typed, setTyped] = React.useState('');
  const [typedError, setTypedError] = React.useState<string | undefined>();
  const [camera, setCamera] = React.useState<ScannerProblem | null>(null);
  const [scanProblem, setScanProblem] = React.useState<string | null>(null);
  const lastRead = React.useRef<string | null>(null);

  const onRead = (text: string) => {
    if (busy || text === lastRead.current) return;
    lastRead.current = text;
    const reading = readEnrollmentCode(text);
    if (reading.ok) {
      setScanProblem(null);
      onToken(reading.token);
    } else {
      setScanProblem('The camera read a QR code, but it is not a Heliodor logger label. Scan the label on the logger enclosure.');
    }
  };
  const submitTyped = () => {
    const reading = readEnrollmentCode(typed);
    if (!reading.ok) return setTypedError(reading.message);
    setTypedError(undefined);
    lastRead.current = null;
    onToken(reading.token);
  };

  return (
    <Page title="Enroll a logger" subtitle="Scan the QR code on the logger label with the camera, or type its token from the bench sheet">
      {children}
      {camera ? <Notice title={camera.title} detail={camera.detail} tone="amber" /> : <QrScanner onRead={onRead} onProblem={setCamera} />}
      {scanProblem ? <Notice title="Not a logger label" detail={scanProblem} tone="amber" /> : null}
      {busy ? (
        <Card>
          <Text style={type.body}>Looking up the label…</Text>
          <Skeleton rows={2} />
        </Card>
      ) : null}
      <ProblemNotice error={error} fallback="This label could not be looked up" />
      <Card>
        <Text style={type.heading}>Type the token</Text>
        <Field
          label="Token from the bench sheet (or the label's link)"
          value={typed}
          onChangeText={(v) => {
            setTyped(v);
            setTypedError(undefined);
          }}
          onSubmitEditing={submitTyped}
          error={typedError}
          hint='The label prints the serial beside its QR code; the bench sheet row with that serial has its token, starting "hlt_". The link a QR reader app shows works too.'
          mono
          autoCapitalize="none"
          autoCorrect={false}
          testID="enroll-code"
        />
        <Button label="Look up label" variant="secondary" onPress={submitTyped} busy={busy} testID="enroll-lookup" />
      </Card>
    </Page>
  );
}

// ─── Step 2: site and install details ───────────────────────────────────────

const MAX_PHOTO_BYTES = 10 * 1024 * 1024;

/** The shunt is typed in the unit on its marking; the API takes ohms. */
const shuntUnits = ['mΩ', 'Ω'] as const;
type ShuntUnit = (typeof shuntUnits)[number];

function shuntInOhm(text: string, unit: ShuntUnit): number | undefined {
  const value = decimal(text);
  return value === undefined || unit === 'Ω' ? value : Number((value / 1000).toPrecision(12));
}

/**
 * What the form holds: the install details as typed (numbers as text, the shunt in its unit) and
 * the site, turned into the enrollment request and checked by its shared schema. The label's token
 * is the screen's, added when the form is sent.
 */
const enrollForm = formSchema(
  z
    .object({
      siteId: z.string().optional(),
      panelWp: decimalText(),
      panelVocV: decimalText(),
      vocTempCoeffPctPerC: decimalText(null),
      shuntOhm: z.string(),
      shuntUnit: z.enum(shuntUnits),
      maxCurrentA: decimalText(),
      tempResolutionBits: z.number().optional(),
      notes: z.string(),
    })
    .transform(({ shuntOhm, shuntUnit, ...details }) => ({ ...details, shuntOhm: shuntInOhm(shuntOhm, shuntUnit) })),
  enrollRequest.omit({ token: true }),
);

export type EnrollFormProps = {
  lookup: Lookup;
  token: string;
  /** `onPhone`: the list is the phone's copy (no connection), saved at that time. */
  sites: { rows: Site[]; loading: boolean; error: unknown; onPhone?: { savedAt: string } | null };
  siteQuery: string;
  onSiteQuery: (q: string) => void;
  createSite: { busy: boolean; error: unknown; run: (input: SiteInput, done: (site: Site) => void) => void };
  enroll: { busy: boolean; error: unknown; run: (input: EnrollInput, photo: File | null, siteName: string) => void };
  onRescan: () => void;
  wide: boolean;
};

export function EnrollForm({ lookup, token, sites, siteQuery, onSiteQuery, createSite, enroll, onRescan, wide }: EnrollFormProps) {
  const { logger, limits } = lookup;
  const [chosenSite, setChosenSite] = React.useState<Site | { id: string; name: string } | undefined>(logger.site ?? undefined);
  const [creating, setCreating] = React.useState(false);
  const [photo, setPhoto] = React.useState<File | null>(null);
  const [photoUrl, setPhotoUrl] = React.useState<string | null>(null);
  const [photoError, setPhotoError] = React.useState<string | undefined>();
  const siteMinTempC = chosenSite && 'minTempC' in chosenSite ? chosenSite.minTempC : null;
  const schema = React.useMemo(() => withProfileCheck(enrollForm, limits, siteMinTempC), [limits, siteMinTempC]);
  const form = useSchemaForm(schema, {
    defaultValues: {
      siteId: logger.site?.id,
      panelWp: '',
      panelVocV: '',
      vocTempCoeffPctPerC: '',
      shuntOhm: '',
      shuntUnit: 'mΩ',
      maxCurrentA: '',
      tempResolutionBits: limits.tempResolutions.includes(12) ? 12 : limits.tempResolutions[limits.tempResolutions.length - 1],
      notes: '',
    },
    missing: { siteId: 'Choose the site where this logger is installed, or create it.' },
  });
  const { control } = form;
  const server = errorOf(enroll.error);
  useServerErrors(form, server);

  React.useEffect(() => () => void (photoUrl && URL.revokeObjectURL(photoUrl)), [photoUrl]);

  const typed = form.watch();
  const install: Partial<InstallForProfile> = {
    shuntOhm: shuntInOhm(typed.shuntOhm, typed.shuntUnit),
    maxCurrentA: decimal(typed.maxCurrentA),
    panelVocV: decimal(typed.panelVocV),
    vocTempCoeffPctPerC: decimal(typed.vocTempCoeffPctPerC, null),
    siteMinTempC,
    tempResolutionBits: typed.tempResolutionBits,
  };
  const result = liveProfile(install, limits);
  const filled = (path: ProfileError['path']) => path === 'tempResolutionBits' || typed[path].trim() !== '';

  const chooseSite = (site: Site | { id: string; name: string }) => {
    form.setValue('siteId', site.id);
    form.clearErrors('siteId');
    setChosenSite(site);
  };

  const choosePhoto = async () => {
    const file = await pickFile('image/jpeg,image/png', 'environment');
    if (!file) return;
    if (!['image/jpeg', 'image/png'].includes(file.type)) return setPhotoError('The photo must be a JPEG or PNG image.');
    if (file.size > MAX_PHOTO_BYTES) return setPhotoError(`The photo is ${(file.size / 1048576).toFixed(1)} MB; the limit is 10 MB.`);
    setPhotoError(undefined);
    setPhoto(file);
    setPhotoUrl(URL.createObjectURL(file));
  };

  // The profile's own figures are sent, as the server computes them from the same function.
  const submit = whenValid(form, (details) => {
    const computed = liveProfile({ ...details, siteMinTempC }, limits);
    if (!computed?.ok) return;
    const { shuntOhm, maxCurrentA, tempResolutionBits } = computed.profile;
    enroll.run({ ...details, token, shuntOhm, maxCurrentA, tempResolutionBits }, photo, chosenSite?.name ?? 'the site');
  });

  const status = loggerStatus(logger);

  const identity = (
    <Card testID="enroll-logger">
      <Row style={{ justifyContent: 'space-between', alignItems: 'flex-start' }}>
        <View style={{ gap: 2, flexShrink: 1 }}>
          <Text style={type.label}>Serial</Text>
          <Mono style={{ fontSize: 22, lineHeight: 28, fontFamily: fonts.monoMedium }}>{logger.serial}</Mono>
        </View>
        <Badge label={status.label} tone={status.tone} />
      </Row>
      <Text style={type.body}>
        {logger.modelName} · board {logger.board}
      </Text>
      {logger.status === 'enrolled' && logger.site ? (
        <Notice title={`Already enrolled at ${logger.site.name}`} tone="amber">
          <Text style={type.body}>
            To install it somewhere else, use Move on{' '}
            <Link href={`/loggers/${logger.id}` as never} style={{ textDecorationLine: 'underline' }}>
              the logger's page
            </Link>
            .
          </Text>
        </Notice>
      ) : null}
      <View style={{ alignSelf: 'flex-start' }}>
        <Button label="Scan a different label" variant="quiet" onPress={onRescan} />
      </View>
    </Card>
  );
  const siteCard = (
    <Card>
      <Text role="heading" aria-level={2} style={type.heading}>
        Site
      </Text>
      {chosenSite ? (
        <Text style={type.body} testID="chosen-site">
          Installing at <Text style={{ fontFamily: fonts.semibold }}>{chosenSite.name}</Text>
        </Text>
      ) : (
        <Text style={type.small}>Choose where the logger is installed.</Text>
      )}
      {creating ? (
        <SiteForm
          submitLabel="Create site"
          busy={createSite.busy}
          error={errorOf(createSite.error)}
          onCancel={() => setCreating(false)}
          onSubmit={(input) =>
            createSite.run(input, (site) => {
              chooseSite(site);
              setCreating(false);
            })
          }
        />
      ) : (
        <>
          <Field label="Find a site" value={siteQuery} onChangeText={onSiteQuery} placeholder="Name, customer or address" testID="site-search" />
          {sites.loading ? <Skeleton rows={3} height={44} /> : null}
          <ProblemNotice error={sites.error} fallback="Could not load the sites" />
          {sites.onPhone ? (
            <Notice
              title="No connection: the sites saved on this phone"
              detail={`The list as it was at ${new Date(sites.onPhone.savedAt).toISOString().slice(0, 16).replace('T', ' ')} UTC. A site created since then appears once back online.`}
              tone="slate"
            />
          ) : null}
          {!sites.loading && !sites.rows.length ? (
            <EmptyState title="No sites found" detail={siteQuery ? 'No site matches this search.' : 'There are no sites you can install at yet: create one.'} />
          ) : null}
          <View role="radiogroup" aria-label="Site" style={{ gap: space.xs }}>
            {sites.rows.slice(0, 12).map((s) => {
              const on = s.id === typed.siteId;
              return (
                <Pressable
                  key={s.id}
                  role="radio"
                  aria-checked={on}
                  aria-label={s.name}
                  onPress={() => chooseSite(s)}
                  style={[styles.siteRow, on && styles.siteRowOn]}
                >
                  <View style={[styles.radio, on && styles.radioOn]} />
                  <View style={{ flexShrink: 1 }}>
                    <Text style={[type.body, { fontFamily: on ? fonts.semibold : fonts.medium }]}>{s.name}</Text>
                    <Text style={type.small}>
                      {s.customer} · {s.address}
                    </Text>
                  </View>
                </Pressable>
              );
            })}
          </View>
          <FieldMessage control={control} name="siteId" />
          <View style={{ alignSelf: 'flex-start' }}>
            <Button label="New site" variant="secondary" onPress={() => setCreating(true)} testID="new-site" />
          </View>
        </>
      )}
    </Card>
  );
  const cautions = <WiringCautions limits={limits} />;
  const details = (
    <Card>
      <Text role="heading" aria-level={2} style={type.heading}>
        Install details
      </Text>
      <Row gap={space.sm} style={{ alignItems: 'flex-start' }}>
        <View style={{ flex: 1 }}>
          <FormField control={control} name="panelWp" label="Panel rating (Wp)" inputMode="decimal" testID="panel-wp" />
        </View>
        <View style={{ flex: 1 }}>
          <FormField control={control} name="panelVocV" label="Open-circuit voltage (V)" inputMode="decimal" testID="panel-voc" />
        </View>
      </Row>
      <FormField
        control={control}
        name="vocTempCoeffPctPerC"
        {...vocCoeffField}
        testID="panel-voc-coeff"
      />
      <Row gap={space.sm} style={{ alignItems: 'flex-end' }}>
        <View style={{ flex: 1 }}>
          <FormField control={control} name="shuntOhm" showError={false} label={`Shunt resistance (${typed.shuntUnit})`} inputMode="decimal" testID="shunt" />
        </View>
        <FormChoices control={control} name="shuntUnit" choices={shuntUnits.map((unit) => ({ value: unit, label: unit }))} />
      </Row>
      <FieldMessage control={control} name="shuntOhm" />
      <FormField control={control} name="maxCurrentA" label="Maximum expected current (A)" inputMode="decimal" testID="max-current" />
      <FormChoices
        control={control}
        name="tempResolutionBits"
        label="Temperature probe resolution"
        choices={[...limits.tempResolutions].sort((a, b) => a - b).map((b) => ({ value: b, label: probeStepChoice(b) }))}
        testID="probe-resolution"
      />
      <FormField
        control={control}
        name="notes"
        label="Mounting notes (optional)"
        multiline
        style={{ minHeight: 72, paddingTop: space.sm }}
        placeholder="Where the enclosure is, cable runs, anything the next visitor should know"
        testID="notes"
      />
      <View style={{ gap: space.xs }}>
        <Text style={type.label}>Photo of the install (optional, JPEG or PNG up to 10 MB)</Text>
        {photoUrl ? <Image source={{ uri: photoUrl }} style={styles.photo} resizeMode="cover" accessibilityLabel="Install photo" /> : null}
        <Row gap={space.sm} wrap>
          <Button label={photo ? 'Choose another photo' : 'Add a photo'} variant="secondary" onPress={choosePhoto} testID="add-photo" />
          {photo ? (
            <Button
              label="Remove photo"
              variant="quiet"
              onPress={() => {
                setPhoto(null);
                setPhotoUrl(null);
              }}
            />
          ) : null}
        </Row>
        {photoError ? (
          <Text role="alert" style={[type.small, { color: colors.ember }]}>
            {photoError}
          </Text>
        ) : null}
      </View>
    </Card>
  );
  const problems = (
    <>
      {server && !server.fieldErrors?.length ? <ProblemNotice error={server} fallback="The logger could not be enrolled" /> : null}
      {server && server.fieldErrors?.length ? <Notice title={server.title ?? 'Check the details'} detail={server.detail} /> : null}
    </>
  );
  const action = (
    <View style={wide ? styles.actionWide : styles.sticky}>
      <Button label="Enroll logger" onPress={submit} busy={enroll.busy} testID="enroll-submit" />
      {chosenSite ? <Text style={[type.small, { textAlign: 'center' }]}>{`${logger.serial} at ${chosenSite.name}`}</Text> : null}
    </View>
  );
  const title = { title: 'Enroll a logger', subtitle: 'Check the logger, choose its site, enter how it is wired' };

  if (wide) {
    // Form on the left; cautions, live calibration and the action stay in view on the right.
    return (
      <Page {...title}>
        <View style={styles.columns}>
          <View style={styles.main}>
            {identity}
            {siteCard}
            {details}
          </View>
          <View style={styles.aside}>
            {cautions}
            <CalibrationPreview result={result} filled={filled} />
            {problems}
            {action}
          </View>
        </View>
      </Page>
    );
  }
  return (
    <View style={{ gap: space.lg }}>
      <Page {...title}>
        {identity}
        {siteCard}
        {cautions}
        {details}
        <CalibrationPreview result={result} filled={filled} />
        {problems}
      </Page>
      {action}
    </View>
  );
}

// ─── Step 3: done ────────────────────────────────────────────────────────────

export function EnrollDone({
  serial,
  loggerId,
  siteName,
  photo,
  onAnother,
}: {
  serial: string;
  loggerId: string;
  siteName: string;
  photo: { state: 'none' | 'uploading' | 'done' | 'failed'; progress: number; error?: unknown; retry?: () => void };
  onAnother: () => void;
}) {
  return (
    <Page title="Logger enrolled">
      <Card style={{ borderColor: colors.moss }} testID="enroll-done">
        <Badge label="Enrolled" tone="moss" />
        <Text style={type.heading}>
          <Text style={{ fontFamily: fonts.monoMedium }}>{serial}</Text> enrolled at {siteName}; it turns online at its first check-in.
        </Text>
        {photo.state === 'uploading' ? <ProgressBar value={photo.progress * 100} label={`Uploading the install photo: ${Math.round(photo.progress * 100)} %`} /> : null}
        <Text style={type.body}>
          Its first {FIRST_READINGS_COUNTED} check-ins with its measurement profile are compared with the wiring figures; the verdict shows on the
          logger's page and its commissioning sheet.
        </Text>
        {photo.state === 'done' ? <Text style={type.small}>Install photo saved.</Text> : null}
        {photo.state === 'failed' ? (
          <View style={{ gap: space.sm }}>
            <ProblemNotice error={photo.error} fallback="The photo was not saved" />
            {photo.retry ? (
              <View style={{ alignSelf: 'flex-start' }}>
                <Button label="Try the photo again" variant="secondary" onPress={photo.retry} />
              </View>
            ) : null}
          </View>
        ) : null}
      </Card>
      <Row gap={space.sm} wrap>
        <Button label="Enroll another logger" onPress={onAnother} testID="enroll-another" />
        <Link href={`/loggers/${loggerId}` as never} asChild>
          <Pressable role="link" style={styles.link}>
            <Text style={[type.body, { fontFamily: fonts.semibold, textDecorationLine: 'underline' }]}>Open the logger</Text>
          </Pressable>
        </Link>
        <Link href={commissioningSheetHref(loggerId) as never} asChild>
          <Pressable role="link" style={styles.link} testID="enroll-commissioning-sheet">
            <Text style={[type.body, { fontFamily: fonts.semibold, textDecorationLine: 'underline' }]}>Commissioning sheet</Text>
          </Pressable>
        </Link>
      </Row>
    </Page>
  );
}

// ─── Kept on the phone: no connection when Enroll was pressed ────────────────

const savedAtText = (iso: string) => new Date(iso).toISOString().slice(0, 16).replace('T', ' ') + ' UTC';

function QueuedCard({ entry, answer, onDiscard }: { entry: QueuedEnrollment; answer?: Enrolled; onDiscard: (id: string) => void }) {
  const what = `${entry.logger.serial} at ${entry.siteName}`;
  if (entry.state === 'refused' && entry.problem) {
    return (
      <Card testID="queued-refused">
        <Row style={{ justifyContent: 'space-between' }} wrap>
          <Text style={[type.body, { fontFamily: fonts.semibold }]}>{what}</Text>
          <Badge label="Refused" tone="ember" />
        </Row>
        <Notice title={entry.problem.title} detail={entry.problem.detail} />
        <Text style={type.small}>Saved on this phone {savedAtText(entry.savedAt)}. Discarding it forgets the wiring figures and the photo kept for it.</Text>
        <View style={{ alignSelf: 'flex-start' }}>
          <Button label="Discard" variant="secondary" onPress={() => onDiscard(entry.id)} testID="queued-discard" />
        </View>
      </Card>
    );
  }
  if (answer && entry.state !== 'photo') return null;
  return (
    <Card testID="queued-waiting">
      <Row style={{ justifyContent: 'space-between' }} wrap>
        <Text style={[type.body, { fontFamily: fonts.semibold }]}>{what}</Text>
        <Badge label={entry.state === 'photo' ? 'Photo waiting' : 'Waiting to send'} tone="amber" />
      </Row>
      <Text style={type.small}>
        {entry.state === 'photo'
          ? 'Enrolled; the install photo is sent when back online.'
          : `Saved on this phone ${savedAtText(entry.savedAt)}${entry.photo ? ' with its photo' : ''}; sent when back online.`}
      </Text>
    </Card>
  );
}

/** The enrollments kept on this phone for the signed-in person: waiting ones, and refused ones to read and discard. */
export function EnrollQueue({
  queue,
  sent,
  onSendNow,
  onDiscard,
}: {
  queue: QueuedEnrollment[];
  sent: Record<string, Enrolled>;
  onSendNow: () => void;
  onDiscard: (id: string) => void;
}) {
  if (!queue.length) return null;
  const waiting = queue.filter((e) => e.state !== 'refused').length;
  return (
    <View style={{ gap: space.sm }} testID="enroll-queue">
      <Text role="heading" aria-level={2} style={type.heading}>
        Kept on this phone
      </Text>
      {queue.map((entry) => (
        <QueuedCard key={entry.id} entry={entry} answer={sent[entry.id]} onDiscard={onDiscard} />
      ))}
      {waiting ? (
        <View style={{ alignSelf: 'flex-start' }}>
          <Button label="Try sending now" variant="secondary" onPress={onSendNow} testID="queued-send" />
        </View>
      ) : null}
    </View>
  );
}

/** After Enroll was pressed without a connection: what is kept, and what happened once it was sent. */
export function EnrollSaved({
  entry,
  answer,
  onDiscard,
  onAnother,
}: {
  /** The queue's copy; null once it left the queue (sent, or discarded). */
  entry: QueuedEnrollment | null;
  answer: Enrolled | undefined;
  onDiscard: (id: string) => void;
  onAnother: () => void;
}) {
  const refused = entry?.state === 'refused' ? entry : null;
  return (
    <Page title={answer ? 'Logger enrolled' : refused ? 'Enrollment refused' : 'Saved on this phone'}>
      {answer ? (
        <Card style={{ borderColor: colors.moss }} testID="enroll-done">
          <Badge label="Enrolled" tone="moss" />
          <Text style={type.heading}>
            <Text style={{ fontFamily: fonts.monoMedium }}>{answer.logger.serial}</Text> enrolled at {answer.logger.site?.name ?? 'the site'}; it turns online at its first check-in.
          </Text>
          <Text style={type.small}>{entry?.state === 'photo' ? 'Sent when the connection returned; the install photo follows when back online.' : 'Sent when the connection returned.'}</Text>
        </Card>
      ) : refused ? (
        <QueuedCard entry={refused} onDiscard={onDiscard} />
      ) : entry ? (
        <Card style={{ borderColor: colors.amber }} testID="enroll-saved">
          <Badge label="Not sent yet" tone="amber" />
          <Text style={type.heading}>Saved on this phone — will send when back online</Text>
          <Text style={type.body}>
            <Text style={{ fontFamily: fonts.monoMedium }}>{entry.logger.serial}</Text> at {entry.siteName}, with its wiring figures{entry.photo ? ' and the install photo' : ''}.
          </Text>
          <Text style={type.small}>
            There is no connection to the server. The enrollment is sent by itself when the phone is back online, or the next time the console is opened; sending it twice never enrolls twice.
          </Text>
        </Card>
      ) : null}
      <Row gap={space.sm} wrap>
        <Button label="Enroll another logger" onPress={onAnother} testID="enroll-another" />
        {answer ? (
          <>
            <Link href={`/loggers/${answer.logger.id}` as never} asChild>
              <Pressable role="link" style={styles.link}>
                <Text style={[type.body, { fontFamily: fonts.semibold, textDecorationLine: 'underline' }]}>Open the logger</Text>
              </Pressable>
            </Link>
            <Link href={commissioningSheetHref(answer.logger.id) as never} asChild>
              <Pressable role="link" style={styles.link}>
                <Text style={[type.body, { fontFamily: fonts.semibold, textDecorationLine: 'underline' }]}>Commissioning sheet</Text>
              </Pressable>
            </Link>
          </>
        ) : null}
      </Row>
    </Page>
  );
}

const styles = StyleSheet.create({
  siteRow: {
    flexDirection: 'row',
    alignItems: 'center',
    gap: space.md,
    minHeight: touchTarget + 8,
    paddingHorizontal: space.md,
    paddingVertical: space.sm,
    borderRadius: radii.md,
    borderWidth: 1,
    borderColor: colors.line,
  },
  siteRowOn: { borderColor: colors.ink, borderWidth: 2, backgroundColor: colors.paperDeep },
  radio: { width: 20, height: 20, borderRadius: 10, borderWidth: 2, borderColor: colors.inkFaint },
  radioOn: { borderColor: colors.ink, backgroundColor: colors.heliodor },
  photo: { width: '100%', maxWidth: 360, height: 200, borderRadius: radii.md },
  sticky: {
    position: 'sticky' as 'relative',
    bottom: 0,
    marginHorizontal: -space.lg,
    marginBottom: -space.xxl,
    paddingHorizontal: space.lg,
    paddingVertical: space.sm,
    gap: 2,
    backgroundColor: colors.paper,
    borderTopColor: colors.line,
    borderTopWidth: 1,
  },
  link: { minHeight: touchTarget, justifyContent: 'center', paddingHorizontal: space.sm },
  columns: { flexDirection: 'row', gap: space.xl, alignItems: 'flex-start' },
  main: { flex: 3, gap: space.lg },
  aside: { flex: 2, gap: space.lg, position: 'sticky' as 'relative', top: 0 },
  actionWide: { gap: space.xs },
});
