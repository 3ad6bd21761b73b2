// One logger: identity, status, site, measurement profile, install, and the token actions.
import React from 'react';
import { Image, Pressable, StyleSheet, Text, View } from 'react-native';
import { Link } from 'expo-router';
import { Page } from './shell';
import { Badge, Button, Card, Disclosure, Field, Mono, Notice, Row } from './ui';
import { WiringCautions } from './wiring-cautions';
import { ConfirmDialog } from './confirm';
import { ProfileForm } from './profile-form';
import { QueryView, type QueryState } from './query-state';
import { loggerStatus } from './status';
import { formatCurrent, formatPower } from './calibration-preview';
import { absoluteTime, relativeTime } from './format';
import { colors, fonts, linkTarget, radii, space, touchTarget, type } from './theme';
import type { ApiError } from '../hooks/api';
import type { LoggerDetail, ProfileInput } from '../hooks/loggers';
import { probeStepText, type ModelLimits } from '../lib/calibration';
import type { Site } from '../hooks/sites';

type Action<A extends unknown[] = []> = { busy: boolean; error: unknown; run: (...args: A) => void };

type Props = {
  state: QueryState<LoggerDetail>;
  rotate: Action;
  /** Admins: new labels for every logger of this logger's batch still waiting for enrollment. */
  canIssueBatchLabels?: boolean;
  batchLabels?: Action<[batchId: string]>;
  retire: Action<[reason: string]>;
  move: Action<[siteId: string]> & { sites: Site[] };
  /** Changing the profile (offered when the logger's `can.editProfile`); limits come from the logger's model. */
  profile: Action<[input: ProfileInput]> & { limits?: ModelLimits };
  photoUrl: string;
  /** The fleet views' part of the page (Why no update?, readings, timeline, notes), shown below the registry's. */
  fleet?: React.ReactNode;
  /** The first-readings check and the link to the commissioning sheet, shown after the install. */
  commissioning?: React.ReactNode;
};

const asApi = (e: unknown) => e as (ApiError & Error) | null;

function useClosedWhenDone(busy: boolean, error: unknown, close: () => void) {
  const was = React.useRef(busy);
  React.useEffect(() => {
    if (was.current && !busy && !error) close();
    was.current = busy;
  }, [busy, error]); // eslint-disable-line react-hooks/exhaustive-deps
}

function Item({ label, children, mono }: { label: string; children: React.ReactNode; mono?: boolean }) {
  return (
    <View style={styles.item}>
      <Text style={type.label}>{label}</Text>
      {typeof children === 'string' || typeof children === 'number' ? <Text style={mono ? type.mono : type.body}>{children}</Text> : children}
    </View>
  );
}

export function LoggerScreen(props: Props) {
  return (
    <QueryView state={props.state} rows={6}>
      {(logger) => <LoggerDetailView logger={logger} {...props} />}
    </QueryView>
  );
}

/** The registry's part of a logger's page; each control shows when the logger's `can` allows it (server policies). */
function LoggerDetailView({ logger, rotate, retire, move, profile, photoUrl, fleet, commissioning, canIssueBatchLabels, batchLabels }: Props & { logger: LoggerDetail }) {
  const can = logger.can;
  const [ask, setAsk] = React.useState<'rotate' | 'retire' | 'move' | 'batch' | null>(null);
  const [editing, setEditing] = React.useState(false);
  const [reason, setReason] = React.useState('');
  const [target, setTarget] = React.useState<string | undefined>();
  const status = loggerStatus(logger);
  const retired = logger.status === 'retired';
  const p = logger.profile;
  // Close a dialog once its action went through (busy → idle without an error).
  useClosedWhenDone(move.busy, move.error, () => setAsk(null));
  useClosedWhenDone(retire.busy, retire.error, () => setAsk(null));
  useClosedWhenDone(profile.busy, profile.error, () => setEditing(false));

  return (
    <Page
      title={logger.serial}
      subtitle={`${logger.modelName} · board ${logger.board} · ${logger.channel} channel`}
      actions={<Badge label={status.label} tone={status.tone} testID="logger-status" />}
    >
      {retired ? <Notice title="Retired" detail={`Retired ${logger.retiredAt ? absoluteTime(logger.retiredAt) : ''}. Its token no longer works.`} tone="slate" /> : null}
      <View style={styles.columns}>
        <Card style={styles.col}>
          <Text style={type.heading}>Identity</Text>
          <View style={styles.grid}>
            <Item label="Serial">
              <Mono style={{ fontFamily: fonts.monoMedium, fontSize: 16 }}>{logger.serial}</Mono>
            </Item>
            <Item label="Model">{logger.modelName}</Item>
            <Item label="Board revision">{logger.board}</Item>
            <Item label="Channel">{logger.channel}</Item>
            <Item label="Firmware" mono>
              {logger.firmware ?? '—'}
            </Item>
            <Item label="Last check-in">{logger.lastSeenAt ? relativeTime(logger.lastSeenAt) : 'never'}</Item>
            <Item label="Supply">{logger.supplyV != null ? `${logger.supplyV} V` : '—'}</Item>
            <Item label="Registered">{absoluteTime(logger.createdAt)}</Item>
          </View>
        </Card>
        <Card style={styles.col}>
          <Text style={type.heading}>Site</Text>
          {logger.site ? (
            <>
              <Link href={`/sites/${logger.site.id}` as never} style={[type.body, linkTarget, { fontFamily: fonts.semibold, textDecorationLine: 'underline' }]}>
                {logger.site.name}
              </Link>
              <Text style={type.small}>{logger.site.customer}</Text>
              {logger.enrolledAt ? (
                <Text style={type.small}>
                  Enrolled {absoluteTime(logger.enrolledAt)}
                  {logger.enrolledBy ? ` by ${logger.enrolledBy.name}` : ''}
                </Text>
              ) : null}
            </>
          ) : (
            <Text style={type.body}>Not installed yet. Scan its label with Enroll on site.</Text>
          )}
          {can.move ? (
            <View style={{ alignSelf: 'flex-start' }}>
              <Button label="Move to another site" variant="secondary" onPress={() => setAsk('move')} testID="move" />
            </View>
          ) : null}
        </Card>
      </View>

      <Card>
        <Row style={{ justifyContent: 'space-between' }}>
          <Text style={type.heading}>Measurement profile</Text>
          {p ? <Badge label={`version ${p.version}`} tone="slate" testID="profile-version" /> : null}
        </Row>
        {p && editing && can.editProfile && profile.limits ? (
          <ProfileForm
            current={p}
            limits={profile.limits}
            vocTempCoeffPctPerC={logger.install?.vocTempCoeffPctPerC ?? null}
            siteMinTempC={logger.site?.minTempC ?? null}
            busy={profile.busy} error={profile.error} onSave={profile.run} onCancel={() => setEditing(false)} />
        ) : p ? (
          <>
            <View style={styles.grid}>
              <Item label="Shunt" mono>{`${Number((p.shuntOhm * 1000).toPrecision(6))} mΩ`}</Item>
              <Item label="Maximum current" mono>{`${p.maxCurrentA} A`}</Item>
              <Item label="Panel voltage limit" mono>{`${p.busVMax} V`}</Item>
              <Item label="Temperature in" mono>{probeStepText(p.tempResolutionBits)}</Item>
              <Item label="Sample every" mono>{`${p.sampleIntervalS} s`}</Item>
              <Item label="Since">{absoluteTime(p.createdAt)}</Item>
            </View>
            {/* Register values: for whoever checks the power-monitor chip by hand. */}
            <Disclosure label="Details" testID="profile-details">
              <View style={styles.grid}>
                <Item label="Calibration" mono>{String(p.calibration)}</Item>
                <Item label="Current step" mono>{formatCurrent(p.currentLsbA)}</Item>
                <Item label="Power step" mono>{formatPower(p.powerLsbW)}</Item>
                <Item label="Probe resolution" mono>{`${p.tempResolutionBits} bits`}</Item>
              </View>
            </Disclosure>
          </>
        ) : (
          <Text style={type.body}>No profile yet: it is computed when the logger is enrolled.</Text>
        )}
        {p && !editing && can.editProfile && profile.limits ? (
          <View style={{ alignSelf: 'flex-start' }}>
            <Button label="Change profile" variant="secondary" onPress={() => setEditing(true)} testID="change-profile" />
          </View>
        ) : null}
      </Card>

      {logger.install ? (
        <Card>
          <Text style={type.heading}>Install</Text>
          <View style={styles.grid}>
            <Item label="Panel rating">{`${logger.install.panelWp} Wp`}</Item>
            <Item label="Open-circuit voltage">{`${logger.install.panelVocV} V`}</Item>
          </View>
          {logger.install.notes ? <Item label="Mounting notes">{logger.install.notes}</Item> : null}
          {logger.install.photo ? <Image source={{ uri: photoUrl }} style={styles.photo} resizeMode="cover" accessibilityLabel="Install photo" /> : null}
        </Card>
      ) : null}

      {logger.status === 'enrolled' ? commissioning : null}

      {can.rotateToken || can.retire ? (
        <Card>
          <Text style={type.heading}>Token and label</Text>
          <Text style={type.small}>{logger.tokenIssuedAt ? `Current token issued ${absoluteTime(logger.tokenIssuedAt)}.` : retired ? 'No token: the logger is retired.' : ''}</Text>
          <Text style={type.body}>A lost or damaged label before enrollment means a new token: the old label stops working at once.</Text>
          <Row wrap gap={space.sm}>
            {can.rotateToken ? <Button label="Rotate token" variant="secondary" onPress={() => setAsk('rotate')} testID="rotate" /> : null}
            {can.retire ? <Button label="Retire logger" variant="danger" onPress={() => setAsk('retire')} testID="retire" /> : null}
          </Row>
        </Card>
      ) : null}

      {logger.batch ? (
        <Card testID="batch">
          <Text style={type.heading}>Batch {logger.batch.fileName}</Text>
          <Text style={type.body}>
            {`Registered ${absoluteTime(logger.batch.registeredAt)} with ${logger.batch.count} ${logger.batch.count === 1 ? 'logger' : 'loggers'}; `}
            {logger.batch.waiting === 0 ? 'all are enrolled or retired.' : `${logger.batch.waiting} still ${logger.batch.waiting === 1 ? 'waits' : 'wait'} for enrollment.`}
          </Text>
          {canIssueBatchLabels && batchLabels && logger.batch.waiting > 0 ? (
            <>
              <Text style={type.small}>Lost the batch's labels or bench sheet? Issue new ones for every logger of the batch not yet enrolled.</Text>
              <View style={{ alignSelf: 'flex-start' }}>
                <Button label="Issue new labels for this batch" variant="secondary" onPress={() => setAsk('batch')} testID="batch-labels" />
              </View>
            </>
          ) : null}
        </Card>
      ) : null}

      {fleet}

      {logger.batch && batchLabels ? (
        <ConfirmDialog
          visible={ask === 'batch'}
          title={`Issue new labels for the batch ${logger.batch.fileName}?`}
          detail={
            `Each of its ${logger.batch.waiting} ${logger.batch.waiting === 1 ? 'logger' : 'loggers'} still waiting for enrollment gets a new token. ` +
            'Their old labels and bench sheet rows stop working at once: boards already flashed from the old bench sheet must be flashed again. ' +
            'Enrolled loggers keep their tokens. The new labels and bench sheet are shown once, right after.'
          }
          confirmLabel="Issue new labels"
          danger
          busy={batchLabels.busy}
          onCancel={() => setAsk(null)}
          onConfirm={() => batchLabels.run(logger.batch!.id)}
        >
          {batchLabels.error ? <Notice title={asApi(batchLabels.error)!.title} detail={asApi(batchLabels.error)!.detail} /> : null}
        </ConfirmDialog>
      ) : null}

      <ConfirmDialog
        visible={ask === 'rotate'}
        title={`Rotate the token of ${logger.serial}?`}
        detail="The current label stops working at once. A new label and bench sheet row are shown once, right after."
        confirmLabel="Rotate token"
        danger
        busy={rotate.busy}
        onCancel={() => setAsk(null)}
        onConfirm={rotate.run}
      >
        {rotate.error ? <Notice title={asApi(rotate.error)!.title} detail={asApi(rotate.error)!.detail} /> : null}
      </ConfirmDialog>
      <ConfirmDialog
        visible={ask === 'retire'}
        title={`Retire ${logger.serial}?`}
        detail="Its token is revoked: the logger can no longer check in or enroll. This cannot be undone."
        confirmLabel="Retire logger"
        danger
        busy={retire.busy}
        onCancel={() => setAsk(null)}
        onConfirm={() => retire.run(reason.trim())}
      >
        <Field label="Reason (optional)" value={reason} onChangeText={setReason} placeholder="Water damage; replaced by FL2-…" testID="retire-reason" />
        {retire.error ? <Notice title={asApi(retire.error)!.title} detail={asApi(retire.error)!.detail} /> : null}
      </ConfirmDialog>
      <ConfirmDialog
        visible={ask === 'move'}
        title={`Move ${logger.serial}`}
        detail="Choose the site it now sits at. The move is recorded in the activity log."
        confirmLabel="Move logger"
        busy={move.busy}
        onCancel={() => setAsk(null)}
        onConfirm={() => target && move.run(target)}
      >
        <WiringCautions limits={profile.limits} title="Before you disconnect and reconnect the logger" />
        <View role="radiogroup" aria-label="New site" style={{ gap: space.xs, maxHeight: 320, overflow: 'scroll' as 'hidden' }}>
          {move.sites
            .filter((s) => s.id !== logger.site?.id)
            .map((s) => (
              <Pressable key={s.id} role="radio" aria-checked={target === s.id} aria-label={s.name} onPress={() => setTarget(s.id)} style={[styles.choice, target === s.id && styles.choiceOn]}>
                <Text style={[type.body, { fontFamily: target === s.id ? fonts.semibold : fonts.regular }]}>{s.name}</Text>
                <Text style={type.small}>{s.customer}</Text>
              </Pressable>
            ))}
        </View>
        {move.error ? <Notice title={asApi(move.error)!.title} detail={asApi(move.error)!.detail} /> : null}
      </ConfirmDialog>
    </Page>
  );
}

const styles = StyleSheet.create({
  columns: { flexDirection: 'row', flexWrap: 'wrap', gap: space.lg },
  col: { flexGrow: 1, flexBasis: 320 },
  grid: { flexDirection: 'row', flexWrap: 'wrap', columnGap: space.lg, rowGap: space.md },
  item: { minWidth: 140, flexBasis: 140, flexGrow: 1, gap: 2 },
  photo: { width: '100%', maxWidth: 480, height: 260, borderRadius: radii.md, backgroundColor: colors.paperDeep },
  choice: { minHeight: touchTarget, justifyContent: 'center', paddingHorizontal: space.md, paddingVertical: space.xs, borderRadius: radii.md, borderWidth: 1, borderColor: colors.line },
  choiceOn: { borderColor: colors.ink, borderWidth: 2, backgroundColor: colors.paperDeep },
});
