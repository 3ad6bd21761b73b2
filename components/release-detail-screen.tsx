// Release detail: state and share, the moves this person may make now (the release's `can`: its
// lifecycle and their role, from the server's policies) with confirmation, the install funnel, targeting, notes and the history of every transition.
import React from 'react';
import { StyleSheet, Text, View } from 'react-native';
import { Page } from './shell';
import { Badge, Button, Card, Field, Mono, Notice, ProgressBar, Row } from './ui';
import { ConfirmDialog, type ProblemLike } from './release-controls';
import { QueryView, type QueryState } from './query-state';
import { ReleaseNotes } from './release-notes';
import { ShareBar, StateBadge, ChannelBadge, bytes, formatShare, stateWords } from './release-badges';
import { FAILURE_REASON_WORDS, RELEASE_STEP_WORDS } from './words';
import { colors, fonts, space, type } from './theme';
import { absoluteTime, relativeTime } from './format';
import { MAX_WIDEN_SHARE, MIN_WIDEN_SHARE } from '../lib/share';
import type { Estimate, FailureReason, Release, ReleaseAction, TransitionRequest } from '../hooks/releases';
import { RELEASE_ACTIONS } from '../schemas/releases';

/** A move the person is about to confirm. */
export type PendingMove = { action: ReleaseAction; share?: number } | { action: 'delete' };

type Props = {
  state: QueryState<Release>;
  wide: boolean;
  pending: PendingMove | null;
  onPending: (p: PendingMove | null) => void;
  estimate: QueryState<Estimate> & { fetchStatus?: string };
  onTransition: (t: TransitionRequest) => void;
  onDelete: () => void;
  busy: boolean;
  error: ProblemLike;
  /** The draft's targeting form (drafts only). */
  targeting?: React.ReactNode;
  /** The rollout dashboard (trip points now, adoption), given the release as loaded. */
  dashboard?: (r: Release) => React.ReactNode;
};

const SHORTCUTS = [5, 25, 50];


export function ReleaseDetailScreen(props: Props) {
  return (
    <QueryView state={props.state} rows={6}>
      {(r) => <Detail {...props} r={r} />}
    </QueryView>
  );
}

/** The lifecycle moves the Rollout card offers (starting the pilot is the draft's targeting form). */
const MOVES = RELEASE_ACTIONS.filter((a) => a !== 'start_pilot');

function Detail({ r, wide, pending, onPending, estimate, onTransition, onDelete, busy, error, targeting, dashboard }: Props & { r: Release }) {
  const live = r.state !== 'draft';
  return (
    <Page title={`Release ${r.version}`} subtitle={`${r.modelName} · uploaded ${r.createdBy ? `by ${r.createdBy.name} ` : ''}${relativeTime(r.createdAt)}`}>
      <Row wrap>
        <StateBadge state={r.state} testID="release-state" />
        <ChannelBadge channel={r.channel} />
        <Mono>{r.version}</Mono>
      </Row>

      {r.flagged ? (
        <Notice
          title="Signed by a revoked key"
          detail={`${r.key ? `${r.key.name} (${r.key.keyId})` : 'The signing key'} was revoked. Treat this image as untrusted: stop or withdraw the release and sign a new image with an active key.`}
        />
      ) : null}

      <ExpiryNotice r={r} />

      <Card testID="rollout">
        <Text role="heading" aria-level={2} style={type.heading}>
          Rollout
        </Text>
        <ShareBar state={r.state} share={r.share} testID="release-share" />
        {r.state === 'paused' || r.state === 'stopped' ? (
          <Text style={type.small}>
            {stateWords[r.state]} at {formatShare(r.share)}; resume returns to {r.resumeState ? stateWords[r.resumeState].toLowerCase() : 'where it was'}.
          </Text>
        ) : null}
        {r.state === 'withdrawn' ? <Text style={type.small}>Withdrawn for good: loggers that installed it keep it.</Text> : null}
        <WhyStopped r={r} />
        {live && MOVES.some((a) => r.can[a]) ? <Moves r={r} onPending={onPending} /> : null}
        {r.can.delete ? (
          <Row wrap>
            <Button label="Delete draft" variant="secondary" onPress={() => onPending({ action: 'delete' })} testID="delete-draft" />
          </Row>
        ) : null}
        {r.can.edit || r.can.widen ? (
          <Notice
            tone="amber"
            title="Widen in small steps"
            detail="A failed install can leave a logger offline until someone visits. Use pilot sites first, keep the supply guard, and watch the failures before each widening."
          />
        ) : null}
        {error && !pending ? <Notice title={error.title ?? 'Not done'} detail={error.detail ?? error.message} /> : null}
      </Card>

      {r.state === 'draft' && targeting ? targeting : null}

      <View style={wide ? styles.columns : { gap: space.lg }}>
        <View style={wide ? styles.column : undefined}>
          <Funnel r={r} />
        </View>
        <View style={wide ? styles.column : undefined}>{live || !r.can.edit ? <Targeting r={r} /> : <ImageCard r={r} />}</View>
      </View>

      {live && dashboard ? dashboard(r) : null}

      <Card>
        <Text role="heading" aria-level={2} style={type.heading}>
          Release notes
        </Text>
        <ReleaseNotes html={r.notesHtml} text={r.notes} />
      </Card>

      <History r={r} />

      <MoveDialog r={r} pending={pending} onPending={onPending} estimate={estimate} onTransition={onTransition} onDelete={onDelete} busy={busy} error={error} />
    </Page>
  );
}

/** Why a release is paused, stopped or withdrawn: the reason of the transition that put it there. */
function WhyStopped({ r }: { r: Release }) {
  if (!['paused', 'stopped', 'withdrawn'].includes(r.state)) return null;
  const last = [...(r.history ?? [])].reverse().find((h) => h.toState === r.state);
  if (!last) return null;
  const tone = r.state === 'stopped' ? 'ember' : r.state === 'paused' ? 'amber' : 'ink';
  return (
    <Notice tone={tone} title={`${stateWords[r.state]} by ${last.actorName} ${relativeTime(last.at)}`} detail={last.reason ? `“${last.reason}”` : 'No reason was given.'} />
  );
}

function Moves({ r, onPending }: { r: Release; onPending: (p: PendingMove) => void }) {
  const can = (a: ReleaseAction) => r.can[a];
  const current = Number(r.share);
  const shortcuts = can('widen') ? SHORTCUTS.filter((s) => r.state === 'pilot' || s > current) : [];
  const [custom, setCustom] = React.useState('');
  const [customError, setCustomError] = React.useState<string | undefined>();
  const widenTo = (text: string) => {
    const n = Number(text.replace(',', '.'));
    const floor = r.state === 'widening' ? current : 0;
    if (!Number.isFinite(n) || n < MIN_WIDEN_SHARE || n > MAX_WIDEN_SHARE) return setCustomError(`A share from ${MIN_WIDEN_SHARE} to ${MAX_WIDEN_SHARE} %; use Complete for 100 %.`);
    if (n <= floor) return setCustomError(`The share can only grow: more than ${formatShare(floor)}.`);
    setCustomError(undefined);
    onPending({ action: 'widen', share: n });
  };
  return (
    <View style={{ gap: space.md }} testID="lifecycle-moves">
      {can('widen') ? (
        <View style={{ gap: space.sm }}>
          <Row wrap>
            {shortcuts.map((s) => (
              <Button key={s} label={`Widen to ${s} %`} onPress={() => onPending({ action: 'widen', share: s })} testID={`widen-${s}`} />
            ))}
            {can('complete') ? <Button label="Complete (100 %)" variant="secondary" onPress={() => onPending({ action: 'complete', share: 100 })} testID="complete" /> : null}
          </Row>
          <Row wrap style={{ alignItems: 'flex-end' }}>
            <View style={{ width: 160 }}>
              <Field label="Other share (%)" keyboardType="decimal-pad" value={custom} onChangeText={setCustom} error={customError} testID="custom-share" />
            </View>
            <Button label="Widen" variant="secondary" onPress={() => widenTo(custom)} testID="widen-custom" />
          </Row>
        </View>
      ) : can('complete') ? (
        <Row wrap>
          <Button label="Complete (100 %)" variant="secondary" onPress={() => onPending({ action: 'complete', share: 100 })} testID="complete" />
        </Row>
      ) : null}
      <Row wrap>
        {can('resume') ? <Button label="Resume" onPress={() => onPending({ action: 'resume' })} testID="resume" /> : null}
        {can('pause') ? <Button label="Pause" variant="secondary" onPress={() => onPending({ action: 'pause' })} testID="pause" /> : null}
        {can('stop') ? <Button label="Stop release" variant="danger" onPress={() => onPending({ action: 'stop' })} testID="stop" /> : null}
        {can('withdraw') ? <Button label="Withdraw" variant="danger" onPress={() => onPending({ action: 'withdraw' })} testID="withdraw" /> : null}
      </Row>
    </View>
  );
}

function MoveDialog({ r, pending, onPending, estimate, onTransition, onDelete, busy, error }: Pick<Props, 'pending' | 'onPending' | 'estimate' | 'onTransition' | 'onDelete' | 'busy' | 'error'> & { r: Release }) {
  if (!pending) return null;
  const close = () => onPending(null);
  const common = { visible: true, onCancel: close, busy, error, testID: 'confirm-move' };
  if (pending.action === 'delete') {
    return (
      <ConfirmDialog {...common} title={`Delete draft ${r.version}`} confirmLabel="Delete draft" tone="danger" onConfirm={onDelete}>
        <Text style={type.body}>The draft is removed and the version {r.version} is free again. The image is deleted too unless another release uses it.</Text>
      </ConfirmDialog>
    );
  }
  const a = pending.action;
  if (a === 'widen' || a === 'complete') {
    const share = a === 'complete' ? 100 : pending.share!;
    return (
      <ConfirmDialog
        {...common}
        title={a === 'complete' ? 'Complete the rollout (100 %)' : `Widen to ${formatShare(share)}`}
        confirmLabel={a === 'complete' ? 'Complete' : `Widen to ${formatShare(share)}`}
        onConfirm={() => onTransition(a === 'complete' ? { action: 'complete' } : { action: 'widen', share })}
      >
        <EstimateText estimate={estimate} share={share} lead={a === 'complete' ? 'Complete (100 %)' : `Widen to ${formatShare(share)}`} />
        <Text style={type.small}>Eligible loggers are offered {r.version} at their next check-in. A failed install can leave a logger offline until someone visits.</Text>
      </ConfirmDialog>
    );
  }
  if (a === 'pause') {
    return (
      <ConfirmDialog {...common} title="Pause the rollout" confirmLabel="Pause" onConfirm={(reason) => onTransition({ action: 'pause', reason: reason || undefined })}>
        <Text style={type.body}>No new offers are made while paused; loggers already downloading or installing finish. Resume returns to {stateWords[r.state].toLowerCase()} at {formatShare(r.share)}.</Text>
      </ConfirmDialog>
    );
  }
  if (a === 'resume') {
    const stopped = r.state === 'stopped';
    return (
      <ConfirmDialog
        {...common}
        title="Resume the rollout"
        confirmLabel="Resume"
        reasonLabel={stopped ? 'Why is it safe to resume? (required)' : undefined}
        onConfirm={(reason) => onTransition({ action: 'resume', reason: reason || undefined })}
      >
        <Text style={type.body}>
          Offers start again{r.resumeState ? ` as ${stateWords[r.resumeState].toLowerCase()}` : ''} at {formatShare(r.share)}.
          {stopped ? ' It was stopped: say what was found and fixed.' : ''}
        </Text>
      </ConfirmDialog>
    );
  }
  if (a === 'stop') {
    return (
      <ConfirmDialog {...common} title={`Stop ${r.version}`} confirmLabel="Stop release" tone="danger" reasonLabel="Reason (required)" onConfirm={(reason) => onTransition({ action: 'stop', reason })}>
        <Text style={type.body}>All offers stop at once. Loggers mid-download stop at their next check-in. Resuming later needs a reason too.</Text>
      </ConfirmDialog>
    );
  }
  if (a === 'withdraw') {
    return (
      <ConfirmDialog {...common} title={`Withdraw ${r.version}`} confirmLabel="Withdraw release" tone="danger" reasonLabel="Reason (required)" onConfirm={(reason) => onTransition({ action: 'withdraw', reason })}>
        <Text style={type.body}>This is final: the release is never offered again and cannot be resumed. Loggers that installed it keep it.</Text>
      </ConfirmDialog>
    );
  }
  return null;
}

function EstimateText({ estimate, share, lead }: { estimate: QueryState<Estimate>; share: number; lead: string }) {
  if (estimate.isPending) return <Text style={type.body}>Counting the loggers that become eligible…</Text>;
  if (estimate.error || !estimate.data) return <Text style={type.body}>The number of loggers could not be counted just now; you can still go ahead.</Text>;
  const e = estimate.data;
  return (
    <View style={{ gap: space.xs }} testID="estimate">
      <Text style={[type.body, { fontFamily: fonts.semibold }]}>
        {lead}: about {e.more} more {e.more === 1 ? 'logger becomes' : 'loggers become'} eligible.
      </Text>
      <Text style={type.small}>
        {e.eligibleAtShare} eligible in all at {formatShare(share)}, up from {e.eligibleNow} now (pilot sites included).
      </Text>
    </View>
  );
}

const funnelSteps = [
  ['offered', 'Offered'],
  ['downloading', 'Downloading'],
  ['downloaded', 'Downloaded'],
  ['installing', 'Installing'],
  ['installed', 'Installed'],
  ['failed', 'Failed'],
] as const;

function Funnel({ r }: { r: Release }) {
  const c = r.counts;
  const top = Math.max(1, c.offered, ...funnelSteps.map(([k]) => Number(c[k] ?? 0)));
  const reasons = (Object.entries(c.failedByReason ?? {}) as [FailureReason, number][]).filter(([, n]) => n > 0);
  return (
    <Card testID="funnel">
      <Text role="heading" aria-level={2} style={type.heading}>
        Install reports
      </Text>
      {c.offered === 0 && r.state === 'draft' ? <Text style={type.small}>Nobody has been offered a draft.</Text> : null}
      {funnelSteps.map(([k, label]) => {
        const n = Number(c[k] ?? 0);
        const tone = k === 'failed' ? 'ember' : k === 'installed' ? 'moss' : 'slate';
        return (
          <View key={k} style={styles.funnelRow}>
            <Text style={[type.dense, { width: 104 }]}>{label}</Text>
            <View style={{ flex: 1 }}>
              <ProgressBar value={(n / top) * 100} name={label} tone={tone} />
            </View>
            <Text style={[type.dense, styles.num, k === 'failed' && n > 0 ? { color: colors.ember, fontFamily: fonts.semibold } : null]}>{n}</Text>
          </View>
        );
      })}
      <Text style={type.small}>Counts are loggers in each step now; a logger moves from offered to installed or failed as it reports.</Text>
      {reasons.length ? (
        <View style={{ gap: space.xs }}>
          <Text style={type.label}>Why installs failed</Text>
          {reasons.map(([k, n]) => (
            <Row key={k} style={{ justifyContent: 'space-between' }}>
              <Text style={type.dense}>{FAILURE_REASON_WORDS[k as FailureReason] ?? k}</Text>
              <Text style={[type.dense, styles.num]}>{n}</Text>
            </Row>
          ))}
        </View>
      ) : null}
    </Card>
  );
}

function Item({ label, children }: { label: string; children: React.ReactNode }) {
  return (
    <View style={{ gap: 2 }}>
      <Text style={type.label}>{label}</Text>
      {typeof children === 'string' ? <Text style={type.body}>{children}</Text> : children}
    </View>
  );
}

function Targeting({ r }: { r: Release }) {
  return (
    <Card>
      <Text role="heading" aria-level={2} style={type.heading}>
        Targeting
      </Text>
      <Item label="Board revisions">{r.boards.join(', ') || '—'}</Item>
      <Item label="Upgrade from">{r.upgradeFrom ? <Mono>{r.upgradeFrom}</Mono> : 'Any older version'}</Item>
      <Item label="Pilot sites">{r.pilotSites?.length ? r.pilotSites.map((s) => s.name).join(', ') : 'None'}</Item>
      <Item label="Daylight window">{r.daylightWindow ? 'On: offered from 1 h after sunrise to 1 h before sunset at each site' : 'Off'}</Item>
      <Item label="Trip points">{`More than ${formatShare(Number((Number(r.tripFailureRatio) * 100).toFixed(2)))} failed once ${r.tripMinReports} reports are in; watchdog and brown-out resets × ${r.tripResetFactor}`}</Item>
      <ImageFacts r={r} />
    </Card>
  );
}

function ImageCard({ r }: { r: Release }) {
  return (
    <Card>
      <Text role="heading" aria-level={2} style={type.heading}>
        Image
      </Text>
      <ImageFacts r={r} />
    </Card>
  );
}

/** The manifest's expiry: a warning from 14 days before (our rule), and past it, nothing is offered. */
const EXPIRY_WARNING_MS = 14 * 24 * 3600 * 1000;

function ExpiryNotice({ r }: { r: Release }) {
  if (!r.expiresAt) return null;
  const left = new Date(r.expiresAt).getTime() - Date.now();
  if (left <= 0) {
    return (
      <Notice
        title="The signed manifest has expired"
        detail={`It expired ${relativeTime(r.expiresAt)}: no logger is offered this release, and loggers refuse it. Sign a new manifest over the same image with a later expiry to keep the release and its cohort.`}
      />
    );
  }
  if (left > EXPIRY_WARNING_MS) return null;
  return (
    <Notice
      tone="amber"
      title="The signed manifest expires soon"
      detail={`It expires ${relativeTime(r.expiresAt)} (${r.expiresAt}). Sign a new manifest over the same image with a later expiry before then, or the release stops being offered.`}
    />
  );
}

function Signers({ r }: { r: Release }) {
  const s = r.signing;
  if (!s) return null;
  const names = (list: { name: string; keyId: string }[]) => list.map((k) => `${k.name} (${k.keyId})`).join(', ');
  return (
    <Item label={`Signatures · ${s.signedBy.length} of ${s.threshold} needed`}>
      <View style={{ gap: space.xs }} testID="release-signers">
        <Row wrap>
          <Badge label={s.met ? 'Signing rule met' : 'Waiting for signatures'} tone={s.met ? 'moss' : 'amber'} />
        </Row>
        {s.signedBy.length ? <Text style={type.body}>Signed: {names(s.signedBy)}</Text> : null}
        {s.missing.length ? <Text style={type.small}>Not signed yet: {names(s.missing)}</Text> : null}
        {s.revokedSigners.length ? <Text style={type.small}>Not counted (revoked since): {names(s.revokedSigners)}</Text> : null}
      </View>
    </Item>
  );
}

function ImageFacts({ r }: { r: Release }) {
  return (
    <>
      <Item label="Image SHA-256">
        <Mono style={styles.hash}>{r.image.sha256}</Mono>
      </Item>
      <Item label="Size · security counter">{`${bytes(r.image.size)} · counter ${r.securityCounter}`}</Item>
      <Item label="Signed with">
        {r.key ? (
          <Row wrap>
            <Text style={type.body}>{r.key.name}</Text>
            <Mono>{r.key.keyId}</Mono>
            <Badge label={r.key.state === 'active' ? 'Active' : r.key.state === 'retired' ? 'Retired' : 'Revoked'} tone={r.key.state === 'revoked' ? 'ember' : r.key.state === 'retired' ? 'slate' : 'moss'} />
          </Row>
        ) : (
          '—'
        )}
      </Item>
      <Signers r={r} />
      {r.expiresAt ? <Item label="Manifest expires">{r.expiresAt}</Item> : null}
    </>
  );
}

function History({ r }: { r: Release }) {
  const rows = [...(r.history ?? [])].sort((a, b) => (a.at < b.at ? 1 : -1));
  return (
    <Card testID="history">
      <Text role="heading" aria-level={2} style={type.heading}>
        History
      </Text>
      {rows.length === 0 ? <Text style={type.small}>No transitions yet: the release is a draft.</Text> : null}
      {rows.map((h, i) => (
        <View key={`${h.at}-${i}`} style={styles.historyRow}>
          <Row wrap>
            <Text style={[type.body, { fontFamily: fonts.semibold }]}>
              {h.action === 'stop' && h.actorType === 'system' ? 'Tripped' : (RELEASE_STEP_WORDS[h.action as keyof typeof RELEASE_STEP_WORDS] ?? h.action)}
              {h.action === 'widen' && h.share !== null ? ` to ${formatShare(h.share)}` : ''}
            </Text>
            {h.fromState ? (
              <Text style={type.small}>
                {stateWords[h.fromState] ?? h.fromState} → {stateWords[h.toState] ?? h.toState}
              </Text>
            ) : null}
          </Row>
          <Text style={type.small}>
            {h.actorName} · <Text aria-label={absoluteTime(h.at)}>{relativeTime(h.at)}</Text> ({absoluteTime(h.at)})
          </Text>
          {h.reason ? <Text style={type.body}>“{h.reason}”</Text> : null}
        </View>
      ))}
    </Card>
  );
}

const styles = StyleSheet.create({
  columns: { flexDirection: 'row', gap: space.lg, alignItems: 'flex-start' },
  column: { flex: 1, minWidth: 0 },
  funnelRow: { flexDirection: 'row', alignItems: 'center', gap: space.sm, minHeight: 28 },
  num: { fontVariant: ['tabular-nums'], minWidth: 40, textAlign: 'right' },
  historyRow: { gap: 2, paddingVertical: space.sm, borderBottomColor: colors.line, borderBottomWidth: 1 },
  hash: { fontSize: 12, wordBreak: 'break-all' } as object,
});
