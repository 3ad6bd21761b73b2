// Sites: a searchable list with an inline "New site" form, and one site's page with its loggers.
import React from 'react';
import { Pressable, StyleSheet, Text, View } from 'react-native';
import { Page } from './shell';
import { Badge, Button, Card, EmptyState, Field, Mono, Row } from './ui';
import { QueryView, type QueryState } from './query-state';
import { SiteForm } from './site-form';
import { loggerStatus, withOnline } from './status';
import { SiteTime } from './site-time';
import { colors, fonts, space, type } from './theme';
import type { List } from '../schemas/common';
import type { Person, Site, SiteInput } from '../hooks/sites';
import type { LoggerRow } from '../hooks/loggers';
import type { ApiError } from '../hooks/api';

type Save = { busy: boolean; error: unknown; run: (input: SiteInput, done: (site: Site) => void) => void };

export function SitesScreen({
  state,
  q,
  onQ,
  canCreate,
  integrators,
  create,
  onOpen,
}: {
  state: QueryState<List<Site>>;
  q: string;
  onQ: (q: string) => void;
  canCreate: boolean;
  integrators?: Person[];
  create: Save;
  onOpen: (id: string) => void;
}) {
  const [creating, setCreating] = React.useState(false);
  return (
    <Page
      title="Sites"
      subtitle="Where loggers are installed"
      actions={canCreate && !creating ? <Button label="New site" onPress={() => setCreating(true)} testID="new-site" /> : undefined}
    >
      {creating ? (
        <Card>
          <Text style={type.heading}>New site</Text>
          <SiteForm
            submitLabel="Create site"
            integrators={integrators}
            busy={create.busy}
            error={create.error as ApiError | null}
            onCancel={() => setCreating(false)}
            onSubmit={(input) => create.run(input, (site) => (setCreating(false), onOpen(site.id)))}
          />
        </Card>
      ) : null}
      <Field label="Search" value={q} onChangeText={onQ} placeholder="Name, customer or address" />
      <QueryView state={state}>
        {(data) =>
          data.rows.length ? (
            <View style={styles.grid}>
              {data.rows.map((s) => (
                <Pressable key={s.id} role="link" testID="site-card" onPress={() => onOpen(s.id)} style={styles.cell}>
                  <Card>
                    <Row style={{ justifyContent: 'space-between' }}>
                      <Text style={[type.body, { fontFamily: fonts.semibold, flexShrink: 1 }]}>{s.name}</Text>
                      <Badge label={`${s.loggerCount} ${s.loggerCount === 1 ? 'logger' : 'loggers'}`} tone="slate" />
                    </Row>
                    <Text style={type.small}>
                      {s.customer} · {s.address}
                    </Text>
                    <Text style={type.small}>{s.integrators.length ? `Integrators: ${s.integrators.map((i) => i.name).join(', ')}` : 'No integrator assigned'}</Text>
                  </Card>
                </Pressable>
              ))}
            </View>
          ) : (
            <EmptyState
              title={q ? 'No sites match' : 'No sites yet'}
              detail={q ? 'Try another search.' : canCreate ? 'Create a site here, or while enrolling a logger on the spot.' : 'Sites appear once an admin or integrator creates them.'}
            />
          )
        }
      </QueryView>
    </Page>
  );
}

export function SiteScreen({
  state,
  loggers,
  integrators,
  save,
  onOpenLogger,
  intervals,
}: {
  state: QueryState<Site>;
  loggers: QueryState<List<LoggerRow>>;
  /** The integrators to choose from, when the site's `can.assignIntegrators` lets the person assign them. */
  integrators?: Person[];
  save: Save;
  onOpenLogger: (id: string) => void;
  intervals: Record<string, number>;
}) {
  const [editing, setEditing] = React.useState(false);
  return (
    <QueryView state={state}>
      {(site) => (
        <Page title={site.name} subtitle={site.customer} actions={site.can.edit && !editing ? <Button label="Edit site" variant="secondary" onPress={() => setEditing(true)} /> : undefined}>
          {editing ? (
            <Card>
              <SiteForm
                initial={site}
                integrators={integrators}
                submitLabel="Save changes"
                busy={save.busy}
                error={save.error as ApiError | null}
                onCancel={() => setEditing(false)}
                onSubmit={(input) => save.run(input, () => setEditing(false))}
              />
            </Card>
          ) : (
            <Card>
              <View style={styles.facts}>
                <Fact label="Address">{site.address}</Fact>
                <Fact label="Coordinates">{site.latitude != null && site.longitude != null ? `${site.latitude}, ${site.longitude}` : '—'}</Fact>
                <Fact label="Time zone">{site.timeZone}</Fact>
                <Fact label="Integrators">{site.integrators.map((i) => i.name).join(', ') || '—'}</Fact>
                <Fact label="Created">
                  <SiteTime at={site.createdAt} timeZone={site.timeZone} />
                </Fact>
              </View>
              {site.notes ? <Fact label="Notes">{site.notes}</Fact> : null}
            </Card>
          )}
          <Text role="heading" aria-level={2} style={type.heading}>
            Loggers here
          </Text>
          <QueryView state={loggers}>
            {(data) =>
              data.rows.length ? (
                <Card style={{ gap: 0, padding: 0 }}>
                  {data.rows.map((r) => {
                    const s = loggerStatus(withOnline(r, intervals));
                    return (
                      <Pressable key={r.id} role="link" onPress={() => onOpenLogger(r.id)} style={styles.loggerRow}>
                        <Mono>{r.serial}</Mono>
                        <Text style={[type.small, { flex: 1 }]}>
                          {r.modelName} · board {r.board}
                        </Text>
                        <View>
                          <Badge label={s.label} tone={s.tone} />
                        </View>
                      </Pressable>
                    );
                  })}
                </Card>
              ) : (
                <EmptyState title="No loggers here yet" detail="Scan a logger's label with Enroll and choose this site." />
              )
            }
          </QueryView>
        </Page>
      )}
    </QueryView>
  );
}

function Fact({ label, children }: { label: string; children: React.ReactNode }) {
  return (
    <View style={{ minWidth: 180, flexGrow: 1, flexBasis: 180, gap: 2 }}>
      <Text style={type.label}>{label}</Text>
      <Text style={type.body}>{children}</Text>
    </View>
  );
}

const styles = StyleSheet.create({
  grid: { flexDirection: 'row', flexWrap: 'wrap', gap: space.md },
  cell: { flexGrow: 1, flexBasis: 300 },
  facts: { flexDirection: 'row', flexWrap: 'wrap', gap: space.md },
  loggerRow: { flexDirection: 'row', alignItems: 'center', gap: space.md, minHeight: 52, paddingHorizontal: space.lg, borderBottomWidth: 1, borderBottomColor: colors.line },
});
