// The team, for admins: who is on it, in which role and status, with a second factor or not, last seen
// when; invite by e-mail, resend or revoke an invitation, change a role, disable or enable someone.
// Phone: one card per person. Wide: a table beside the invitation form.
import React from 'react';
import { StyleSheet, Text, View } from 'react-native';
import { Page } from './shell';
import { Badge, Button, Card, EmptyState, Field, Notice, Row } from './ui';
import { Choices } from './choice';
import { ConfirmDialog, type ProblemLike } from './release-controls';
import { QueryView, type QueryState } from './query-state';
import { colors, fonts, space, type } from './theme';
import { relativeTime } from './format';
import { messageFor, sentence, useForm } from './form-state';
import { PERSON_STATUS_WORDS } from './words';
import { roleNames, roles, needsSecondFactor, type Role } from '../schemas/auth';
import { invitationRequest, type TeamList, type TeamMember } from '../schemas/team';
import type { ApiError } from '../hooks/api';

/** What an admin can do to one person; the screen asks first where it matters. */
export type MemberAction =
  | { kind: 'role'; member: TeamMember; role: Role }
  | { kind: 'disable' | 'enable' | 'resend' | 'revoke' | 'second_factor_off'; member: TeamMember };

type Props = {
  state: QueryState<TeamList>;
  meId: string;
  wide: boolean;
  now?: Date;
  invite: { run: (email: string, role: Role, done: () => void) => void; busy: boolean; error: ApiError | null; sent: { email: string; mailed: boolean } | null };
  act: { run: (a: MemberAction) => void; busy: boolean; error: ProblemLike; pending: MemberAction | null; ask: (a: MemberAction | null) => void; notice: string | null };
};

const roleChoices = roles.map((r) => ({ value: r, label: roleNames[r] }));

const roleDuties: Record<Role, string> = {
  admin: 'Everything, including people, signing keys and API tokens.',
  release_engineer: 'Uploads signed images and moves releases through their life.',
  integrator: 'Registers and enrolls loggers at the sites assigned to them.',
  support: 'Reads the fleet, releases and activity; adds notes.',
};

export function TeamScreen(p: Props) {
  const now = p.now ?? new Date();
  return (
    <Page title="Team" subtitle="People who use this console, their roles and their access">
      {p.act.notice ? <Notice tone="moss" title={p.act.notice} /> : null}
      {/* Phones: the invitation form first, above a list that grows with the team. */}
      {p.wide ? null : <InviteForm {...p.invite} />}
      <View style={p.wide ? styles.columns : styles.stack}>
        <View style={p.wide ? { flex: 3, minWidth: 0 } : undefined}>
          <QueryView state={p.state} rows={5}>
            {(data) =>
              data.rows.length === 0 ? (
                <EmptyState title="No one here yet" detail="Invite the people who work with the loggers: integrators, support, release engineers." />
              ) : p.wide ? (
                <TeamTable rows={data.rows} meId={p.meId} now={now} ask={p.act.ask} />
              ) : (
                <View style={styles.stack}>
                  {data.rows.map((m) => (
                    <MemberCard key={m.id} m={m} meId={p.meId} now={now} ask={p.act.ask} />
                  ))}
                </View>
              )
            }
          </QueryView>
        </View>
        {p.wide ? (
          <View style={{ flex: 2, minWidth: 0 }}>
            <InviteForm {...p.invite} />
          </View>
        ) : null}
      </View>
      {p.act.pending ? <ActionDialog action={p.act.pending} busy={p.act.busy} error={p.act.error} onCancel={() => p.act.ask(null)} onConfirm={p.act.run} /> : null}
    </Page>
  );
}

function lastSeen(m: TeamMember, now: Date) {
  if (m.status === 'invited') return m.invitationExpiresAt ? `Invitation link expires ${relativeTime(m.invitationExpiresAt, now)}` : 'Invitation link expired: resend it';
  return m.lastSignInAt ? `Last signed in ${relativeTime(m.lastSignInAt, now)}` : 'Has not signed in yet';
}

function StatusBadges({ m }: { m: TeamMember }) {
  const s = PERSON_STATUS_WORDS[m.status];
  return (
    <Row wrap gap={space.xs}>
      <Badge label={s.label} tone={s.tone} testID={`status-${m.email}`} />
      {m.status !== 'invited' ? (
        <Badge label={m.secondFactor ? 'Second factor on' : 'Second factor off'} tone={m.secondFactor ? 'moss' : needsSecondFactor(m.role) ? 'amber' : 'slate'} />
      ) : null}
    </Row>
  );
}

function MemberActions({ m, meId, ask }: { m: TeamMember; meId: string; ask: (a: MemberAction) => void }) {
  if (m.status === 'invited') {
    return (
      <Row wrap>
        <Button label="Resend" variant="secondary" onPress={() => ask({ kind: 'resend', member: m })} testID={`resend-${m.email}`} />
        <Button label="Revoke" variant="secondary" onPress={() => ask({ kind: 'revoke', member: m })} testID={`revoke-${m.email}`} />
        <Button label="Change role" variant="quiet" onPress={() => ask({ kind: 'role', member: m, role: m.role })} />
      </Row>
    );
  }
  if (m.status === 'disabled') {
    return (
      <Row wrap>
        <Button label="Enable" variant="secondary" onPress={() => ask({ kind: 'enable', member: m })} testID={`enable-${m.email}`} />
      </Row>
    );
  }
  return (
    <Row wrap>
      <Button label="Change role" variant="secondary" onPress={() => ask({ kind: 'role', member: m, role: m.role })} testID={`role-${m.email}`} />
      {m.id !== meId ? <Button label="Disable" variant="secondary" onPress={() => ask({ kind: 'disable', member: m })} testID={`disable-${m.email}`} /> : null}
      {m.secondFactor && m.id !== meId ? <Button label="Turn off second factor" variant="quiet" onPress={() => ask({ kind: 'second_factor_off', member: m })} /> : null}
    </Row>
  );
}

function MemberCard({ m, meId, now, ask }: { m: TeamMember; meId: string; now: Date; ask: (a: MemberAction) => void }) {
  return (
    <Card testID="member-card">
      <Row style={{ justifyContent: 'space-between' }} wrap>
        <Text style={type.heading}>
          {m.name}
          {m.id === meId ? <Text style={type.small}> (you)</Text> : null}
        </Text>
        <Text style={[type.body, { fontFamily: fonts.medium }]}>{roleNames[m.role]}</Text>
      </Row>
      <Text style={type.small}>{m.email}</Text>
      <StatusBadges m={m} />
      <Text style={type.small}>{lastSeen(m, now)}</Text>
      <MemberActions m={m} meId={meId} ask={ask} />
    </Card>
  );
}

function TeamTable({ rows, meId, now, ask }: { rows: TeamMember[]; meId: string; now: Date; ask: (a: MemberAction) => void }) {
  return (
    <Card style={{ padding: 0, gap: 0 }}>
      <View style={[styles.tr, styles.th]}>
        <Text style={[type.label, styles.cPerson]}>Person</Text>
        <Text style={[type.label, styles.cRole]}>Role</Text>
        <Text style={[type.label, styles.cStatus]}>Status</Text>
        <Text style={[type.label, styles.cSeen]}>Last seen</Text>
      </View>
      {rows.map((m) => (
        <View key={m.id} style={styles.row} testID="member-row">
          <View style={styles.tr}>
            <View style={styles.cPerson}>
              <Text style={[type.dense, { fontFamily: fonts.semibold }]}>
                {m.name}
                {m.id === meId ? <Text style={type.small}> (you)</Text> : null}
              </Text>
              <Text style={type.small}>{m.email}</Text>
            </View>
            <Text style={[type.dense, styles.cRole]}>{roleNames[m.role]}</Text>
            <View style={styles.cStatus}>
              <StatusBadges m={m} />
            </View>
            <Text style={[type.small, styles.cSeen]}>{lastSeen(m, now)}</Text>
          </View>
          <MemberActions m={m} meId={meId} ask={ask} />
        </View>
      ))}
    </Card>
  );
}

function InviteForm({ run, busy, error, sent }: Props['invite']) {
  const form = useForm<{ email: string; role: Role }>({ email: '', role: 'integrator' });
  const submit = () => form.submit(invitationRequest, (v) => run(v.email, v.role, () => form.set('email', '')));
  const conflict = error && error.status !== 400 ? error : null;
  return (
    <Card>
      <Text role="heading" aria-level={2} style={type.heading}>
        Invite someone
      </Text>
      <Text style={type.body}>They get an e-mail with a link to choose their name and password. The link works once, for 72 hours.</Text>
      {sent ? (
        sent.mailed ? (
          <Notice tone="moss" title={`Invitation sent to ${sent.email}`} />
        ) : (
          <Notice tone="amber" title={`Invitation saved, but the e-mail to ${sent.email} was not sent`} detail="Check the mail settings, then resend it from the list." />
        )
      ) : null}
      {conflict ? <Notice title={conflict.title} detail={conflict.detail} /> : null}
      <Field
        label="E-mail"
        value={form.values.email}
        onChangeText={(v) => form.set('email', v)}
        autoCapitalize="none"
        autoComplete="off"
        inputMode="email"
        error={sentence(messageFor(form.errors, error, 'email'))}
        testID="invite-email"
      />
      <Choices label="Role" choices={roleChoices} value={form.values.role} onChange={(r) => form.set('role', r)} error={sentence(messageFor(form.errors, error, 'role'))} testID="invite-role" />
      <Text style={type.small}>{roleDuties[form.values.role]}</Text>
      <Row style={{ justifyContent: 'flex-end' }}>
        <Button label="Send invitation" onPress={submit} busy={busy} testID="invite-send" />
      </Row>
    </Card>
  );
}

function ActionDialog({ action, busy, error, onCancel, onConfirm }: { action: MemberAction; busy: boolean; error: ProblemLike; onCancel: () => void; onConfirm: (a: MemberAction) => void }) {
  const m = action.member;
  const [role, setRole] = React.useState<Role>(action.kind === 'role' ? action.role : m.role);
  const words: Record<MemberAction['kind'], { title: string; confirm: string; danger?: boolean; body: string }> = {
    role: {
      title: `Change ${m.name}'s role`,
      confirm: 'Change role',
      body: m.status === 'invited' ? 'They join in the role chosen here.' : `${m.name} is signed out and signs in again with the new role. Sites assigned to them stay assigned.`,
    },
    disable: { title: `Disable ${m.name}`, confirm: 'Disable', danger: true, body: `${m.name} is signed out at their next request and cannot sign in. What they did stays in the records under their name. You can enable them again.` },
    enable: { title: `Enable ${m.name}`, confirm: 'Enable', body: `${m.name} can sign in again as ${roleNames[m.role]}.` },
    resend: { title: `Resend the invitation to ${m.email}`, confirm: 'Resend', body: 'A new link is sent, valid for 72 hours; the earlier link stops working.' },
    revoke: { title: `Revoke the invitation to ${m.email}`, confirm: 'Revoke', danger: true, body: 'The link stops working and the address leaves the list. You can invite it again later.' },
    second_factor_off: {
      title: `Turn off ${m.name}'s second factor`,
      confirm: 'Turn off',
      danger: true,
      body: `For someone who lost their phone and their recovery codes. ${m.name} is signed out${needsSecondFactor(m.role) ? ' and, in production, sets up a new second factor at the next sign-in' : ''}.`,
    },
  };
  const w = words[action.kind];
  return (
    <ConfirmDialog
      visible
      title={w.title}
      confirmLabel={w.confirm}
      tone={w.danger ? 'danger' : 'primary'}
      busy={busy}
      error={error}
      onCancel={onCancel}
      onConfirm={() => onConfirm(action.kind === 'role' ? { ...action, role } : action)}
      testID="confirm-member"
    >
      {action.kind === 'role' ? <Choices label="New role" choices={roleChoices} value={role} onChange={setRole} testID="member-role" /> : null}
      {action.kind === 'role' ? <Text style={type.small}>{roleDuties[role]}</Text> : null}
      <Text style={type.body}>{w.body}</Text>
    </ConfirmDialog>
  );
}

const styles = StyleSheet.create({
  columns: { flexDirection: 'row', gap: space.lg, alignItems: 'flex-start' },
  stack: { gap: space.md },
  row: { borderTopColor: colors.line, borderTopWidth: 1, paddingHorizontal: space.md, paddingVertical: space.sm, gap: space.xs },
  tr: { flexDirection: 'row', alignItems: 'center', gap: space.md },
  th: { paddingHorizontal: space.md, paddingVertical: space.sm },
  cPerson: { flex: 3, minWidth: 0 },
  cRole: { flex: 2 },
  cStatus: { flex: 3 },
  cSeen: { flex: 2 },
});
