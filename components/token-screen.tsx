// API tokens for automation: a CI job pushing signed images, a report reading the fleet.
import React from 'react';
import { Platform, StyleSheet, Text, View } from 'react-native';
import { useController } from 'react-hook-form';
import { z } from 'zod';
import { Page } from './shell';
import { Badge, Button, Card, EmptyState, Mono, Notice, Row } from './ui';
import { FieldMessage, FormField, toggled, useSchemaForm, useServerErrors, whenValid } from './form';
import { ChoiceChip, ConfirmDialog, ProblemNotice, type ProblemLike } from './release-controls';
import { QueryView, type QueryState } from './query-state';
import { colors, radii, space, type } from './theme';
import { absoluteTime, relativeTime } from './format';
import type { List } from '../schemas/common';
import { tokenScopes, type ApiToken, type NewToken, type TokenScope } from '../hooks/tokens';
import { createTokenRequest } from '../schemas/tokens';

type Props = {
  state: QueryState<List<ApiToken>>;
  onCreate: (body: { name: string; scopes: TokenScope[]; expiresAt: string }, done: () => void) => void;
  creating: boolean;
  createError: (ProblemLike & { field?: (p: string) => string | undefined }) | null;
  created: NewToken | null;
  onDismissCreated: () => void;
  revoking: ApiToken | null;
  onRevoking: (t: ApiToken | null) => void;
  onRevoke: (t: ApiToken) => void;
  revokeBusy: boolean;
  revokeError: ProblemLike;
  wide: boolean;
  now?: Date;
};

const scopeWords: Record<TokenScope, string> = {
  'images:write': 'Upload signed images (create drafts)',
  'releases:write': 'Change releases: targeting and lifecycle',
  'fleet:read': 'Read loggers and releases',
  'metrics:read': 'Read the server metrics (for a monitoring scraper)',
};

function isoDate(d: Date) {
  return d.toISOString().slice(0, 10);
}

export function TokenScreen(p: Props) {
  const now = p.now ?? new Date();
  return (
    <Page title="API tokens" subtitle="For automation such as a build job that pushes signed images; people sign in instead.">
      {p.created ? <CreatedToken token={p.created} onDismiss={p.onDismissCreated} /> : null}
      <View style={p.wide ? styles.columns : { gap: space.lg }}>
        <View style={p.wide ? { flex: 3, minWidth: 0 } : undefined}>
          <QueryView state={p.state} rows={4}>
            {(data) =>
              data.rows.length ? (
                <View style={{ gap: space.sm }}>
                  {data.rows.map((t) => (
                    <TokenCard key={t.id} t={t} now={now} onRevoke={() => p.onRevoking(t)} />
                  ))}
                </View>
              ) : (
                <EmptyState title="No API tokens yet" detail="Create a token for each automated job, with only the scopes it needs and an expiry date." />
              )
            }
          </QueryView>
        </View>
        <View style={p.wide ? { flex: 2, minWidth: 0 } : undefined}>
          <CreateForm onCreate={p.onCreate} busy={p.creating} error={p.createError} now={now} />
        </View>
      </View>
      {p.revoking ? (
        <ConfirmDialog visible title={`Revoke ${p.revoking.name}`} confirmLabel="Revoke token" tone="danger" busy={p.revokeBusy} error={p.revokeError} onCancel={() => p.onRevoking(null)} onConfirm={() => p.onRevoke(p.revoking!)} testID="confirm-token">
          <Text style={type.body}>Anything using this token is refused from its next request. The token cannot be used again; create a new one if the job still needs access.</Text>
        </ConfirmDialog>
      ) : null}
    </Page>
  );
}

function TokenCard({ t, now, onRevoke }: { t: ApiToken; now: Date; onRevoke: () => void }) {
  const expired = new Date(t.expiresAt).getTime() <= now.getTime();
  const status = t.revokedAt ? { label: 'Revoked', tone: 'ember' as const } : expired ? { label: 'Expired', tone: 'amber' as const } : { label: 'Active', tone: 'moss' as const };
  return (
    <Card testID="token-card">
      <Row style={{ justifyContent: 'space-between' }} wrap>
        <Text style={type.heading}>{t.name}</Text>
        <Badge label={status.label} tone={status.tone} />
      </Row>
      <Row wrap>
        {t.scopes.map((s) => (
          <Mono key={s} style={styles.scope}>
            {s}
          </Mono>
        ))}
      </Row>
      <Text style={type.small}>
        {expired ? 'Expired' : 'Expires'} {absoluteTime(t.expiresAt)} · last used {t.lastUsedAt ? relativeTime(t.lastUsedAt, now) : 'never'} · created by {t.createdBy?.name ?? '—'} {relativeTime(t.createdAt, now)}
      </Text>
      {t.can.revoke ? (
        <Row>
          <Button label="Revoke" variant="danger" onPress={onRevoke} />
        </Row>
      ) : null}
    </Card>
  );
}

/**
 * The token request as the form holds it: the expiry is typed as a date and means the end of that
 * day in UTC; the shared rule checks the time it becomes, and the form adds that it lies ahead.
 */
function tokenForm(now: Date) {
  return createTokenRequest.extend({
    expiresAt: z
      .string()
      .trim()
      .regex(/^\d{4}-\d{2}-\d{2}$/, 'A date as YYYY-MM-DD.')
      .transform((day) => `${day}T23:59:59Z`)
      .pipe(createTokenRequest.shape.expiresAt)
      .refine((at) => Date.parse(at) > now.getTime(), 'Choose a date in the future.'),
  });
}

function CreateForm({ onCreate, busy, error, now }: { onCreate: Props['onCreate']; busy: boolean; error: Props['createError']; now: Date }) {
  const form = useSchemaForm(tokenForm(now), {
    defaultValues: { name: '', scopes: ['images:write'], expiresAt: isoDate(new Date(now.getTime() + 90 * 86_400_000)) },
  });
  const { control } = form;
  useServerErrors(form, error);
  const scopes = useController({ control, name: 'scopes' }).field;
  const chosen = (scopes.value ?? []) as TokenScope[];
  const submit = whenValid(form, (body) => onCreate(body, () => form.setValue('name', '')));
  return (
    <Card>
      <Text role="heading" aria-level={2} style={type.heading}>
        Create a token
      </Text>
      <FormField control={control} name="name" label="Name" testID="token-name" />
      <View style={{ gap: space.xs }}>
        <Text style={type.label}>Scopes: only what the job needs</Text>
        {tokenScopes.map((s) => (
          <View key={s} style={{ gap: 2 }}>
            <ChoiceChip label={s} mono checked={chosen.includes(s)} onToggle={() => scopes.onChange(toggled(chosen, s))} testID={`scope-${s}`} />
            <Text style={[type.small, { paddingLeft: space.sm }]}>{scopeWords[s]}</Text>
          </View>
        ))}
        <FieldMessage control={control} name="scopes" />
      </View>
      <FormField control={control} name="expiresAt" label="Expires on (YYYY-MM-DD, end of day UTC)" autoCapitalize="none" testID="token-expiry" />
      <ProblemNotice error={error} />
      <Row style={{ justifyContent: 'flex-end' }}>
        <Button label="Create token" busy={busy} onPress={submit} testID="create-token" />
      </Row>
    </Card>
  );
}

function CreatedToken({ token, onDismiss }: { token: NewToken; onDismiss: () => void }) {
  const [copied, setCopied] = React.useState<'yes' | 'no' | null>(null);
  const copy = async () => {
    try {
      if (Platform.OS !== 'web' || !navigator.clipboard) throw new Error('no clipboard');
      await navigator.clipboard.writeText(token.token);
      setCopied('yes');
    } catch {
      setCopied('no');
    }
  };
  return (
    <Notice tone="moss" title={`Token "${token.name}" created`} detail="Copy it now: it is shown only this once. Heliodor keeps only its SHA-256 and cannot show it again.">
      <View style={styles.tokenBox}>
        <Text selectable style={[type.mono, styles.tokenText]} testID="new-token">
          {token.token}
        </Text>
      </View>
      <Row wrap>
        <Button label={copied === 'yes' ? 'Copied' : 'Copy token'} onPress={copy} testID="copy-token" />
        <Button label="I have stored it" variant="secondary" onPress={onDismiss} />
      </Row>
      {copied === 'no' ? <Text style={type.small}>Copying is not available here: select the token and copy it by hand.</Text> : null}
      <Text style={type.small}>Send it as `Authorization: Bearer …`. Store it in the job's secret store, never in a repository.</Text>
    </Notice>
  );
}

const styles = StyleSheet.create({
  columns: { flexDirection: 'row', gap: space.lg, alignItems: 'flex-start' },
  scope: { fontSize: 12, backgroundColor: colors.paperDeep, paddingHorizontal: space.sm, paddingVertical: 2, borderRadius: radii.sm },
  tokenBox: { backgroundColor: colors.surface, borderColor: colors.line, borderWidth: 1, borderRadius: radii.sm, padding: space.sm },
  tokenText: { wordBreak: 'break-all' } as object,
});
