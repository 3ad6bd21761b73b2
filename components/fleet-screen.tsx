// The Loggers tab as the fleet table: filters, column choice, sort and pages all come from (and go to)
// the URL, so a copied link reproduces the view. Phones get cards and a folded filter panel.
import React from 'react';
import { Text, View } from 'react-native';
import { Page } from './shell';
import { Button, Card, EmptyState, Field, Row } from './ui';
import { Choices } from './choice';
import { countText, DownloadLink, Pager, Select, UPDATE_STATE_LABELS, type Option } from './fleet-controls';
import { FleetCard, FleetSkeleton, FleetTable, choosableColumns } from './fleet-table';
import { Notice } from './ui';
import { space, type } from './theme';
import { FLEET_FLAGS, UPDATE_STATES } from '../schemas/words';
import { FLAG_WORDS } from './words';
import type { FleetQuery } from '../hooks/fleet';
import type { FleetList } from '../schemas/fleet';

type Props = {
  state: { data?: FleetList; isPending: boolean; isFetching?: boolean; error: Error | null; refetch: () => unknown };
  filter: FleetQuery;
  onFilter: (next: FleetQuery) => void;
  wide: boolean;
  sites: Option[];
  models: Option[];
  boards: Option[];
  exportHref: string;
  canRegister: boolean;
  onRegister: () => void;
  onOpen: (id: string) => void;
};

const filterKeys = ['q', 'siteId', 'modelId', 'board', 'channel', 'version', 'flag', 'updateState', 'status'] as const;

export function FleetScreen({ state, filter, onFilter, wide, sites, models, boards, exportHref, canRegister, onRegister, onOpen }: Props) {
  const [q, setQ] = React.useState(filter.q ?? '');
  const [version, setVersion] = React.useState(filter.version ?? '');
  const [open, setOpen] = React.useState(false);
  const [choosing, setChoosing] = React.useState(false);
  const set = (patch: Partial<FleetQuery>) => onFilter({ ...filter, page: 1, ...patch });

  // Search as the person types, a moment after the last key; the version once it is complete (Enter or blur).
  React.useEffect(() => {
    const t = setTimeout(() => {
      if ((filter.q ?? '') !== q.trim()) set({ q: q.trim() || undefined });
    }, 300);
    return () => clearTimeout(t);
  }, [q]); // eslint-disable-line react-hooks/exhaustive-deps
  React.useEffect(() => setQ(filter.q ?? ''), [filter.q]);
  React.useEffect(() => setVersion(filter.version ?? ''), [filter.version]);
  const applyVersion = () => {
    if ((filter.version ?? '') !== version.trim()) set({ version: version.trim() || undefined });
  };

  const active = filterKeys.filter((k) => filter[k] !== undefined).length;
  const total = state.data?.total;
  const badVersion = (state.error as { field?: (p: string) => string | undefined } | null)?.field?.('version');

  const filters = (
    <Card style={{ gap: space.md }} testID="fleet-filters">
      <Row wrap gap={space.md} style={{ alignItems: 'flex-end' }}>
        <Select label="Site" value={filter.siteId} options={sites} onChange={(v) => set({ siteId: v })} anyLabel="Any site" testID="filter-site" />
        <Select label="Model" value={filter.modelId} options={models} onChange={(v) => set({ modelId: v })} anyLabel="Any model" testID="filter-model" />
        <Select label="Board" value={filter.board} options={boards} onChange={(v) => set({ board: v })} anyLabel="Any board" testID="filter-board" />
        <Select
          label="Channel"
          value={filter.channel}
          options={[
            { value: 'stable', label: 'stable' },
            { value: 'early', label: 'early' },
          ]}
          onChange={(v) => set({ channel: v as FleetQuery['channel'] })}
          anyLabel="Any channel"
          testID="filter-channel"
        />
        <Select label="Flag" value={filter.flag} options={FLEET_FLAGS.map((f) => ({ value: f, label: FLAG_WORDS[f].label }))} onChange={(v) => set({ flag: v as FleetQuery['flag'] })} anyLabel="Any flag" testID="filter-flag" />
        <Select
          label="Update state"
          value={filter.updateState}
          options={UPDATE_STATES.map((s) => ({ value: s, label: UPDATE_STATE_LABELS[s] }))}
          onChange={(v) => set({ updateState: v as FleetQuery['updateState'] })}
          anyLabel="Any state"
          testID="filter-update-state"
        />
        <Select
          label="Status"
          value={filter.status}
          options={[
            { value: 'registered', label: 'Registered' },
            { value: 'enrolled', label: 'Enrolled' },
            { value: 'retired', label: 'Retired' },
          ]}
          onChange={(v) => set({ status: v as FleetQuery['status'] })}
          anyLabel="Any status"
          testID="filter-status"
        />
        <View style={{ flexGrow: 1, flexBasis: 200 }}>
          <Field
            label="Version (exact or range)"
            value={version}
            onChangeText={setVersion}
            onBlur={applyVersion}
            onSubmitEditing={applyVersion}
            placeholder="2.3.1 or >=2.1.0 <2.3.0"
            autoCapitalize="none"
            mono
            error={badVersion}
            testID="filter-version"
          />
        </View>
      </Row>
      {active ? (
        <View style={{ alignSelf: 'flex-start' }}>
          <Button label="Clear filters" variant="quiet" onPress={() => onFilter({ ...filter, q: undefined, siteId: undefined, modelId: undefined, board: undefined, channel: undefined, version: undefined, flag: undefined, updateState: undefined, status: undefined, page: 1 })} />
        </View>
      ) : null}
    </Card>
  );

  return (
    <Page
      title="Loggers"
      subtitle={total === undefined ? 'The fleet' : `${countText(total, state.data?.totalIsEstimate)} ${total === 1 ? 'logger' : 'loggers'}${active ? ' match' : ' in the fleet'}`}
      actions={
        <>
          <DownloadLink href={exportHref} label="Export CSV" testID="fleet-export" />
          {canRegister ? <Button label="Register loggers" onPress={onRegister} testID="register-loggers" /> : null}
        </>
      }
    >
      <View style={{ gap: space.sm }}>
        <Field label="Search" value={q} onChangeText={setQ} placeholder="Serial, site or customer" autoCapitalize="none" testID="logger-search" />
        <Row wrap gap={space.sm}>
          {wide ? null : <Button label={open ? 'Hide filters' : active ? `Filters (${active})` : 'Filters'} variant="secondary" onPress={() => setOpen((v) => !v)} testID="toggle-filters" />}
          {wide ? <Button label={choosing ? 'Done choosing columns' : 'Columns'} variant="secondary" onPress={() => setChoosing((v) => !v)} testID="choose-columns" /> : null}
          {!wide ? (
            <Select
              label="Sort by"
              value={`${filter.sort}:${filter.dir}`}
              options={[
                { value: 'serial:asc', label: 'Serial' },
                { value: 'lastSeen:asc', label: 'Longest unseen' },
                { value: 'supplyV:asc', label: 'Lowest supply' },
                { value: 'resets24h:desc', label: 'Most resets' },
                { value: 'firmware:asc', label: 'Oldest firmware' },
                { value: 'site:asc', label: 'Site' },
              ]}
              onChange={(v) => {
                const [sort, dir] = (v ?? 'serial:asc').split(':');
                set({ sort: sort as FleetQuery['sort'], dir: dir as FleetQuery['dir'] });
              }}
              anyLabel="Serial"
              testID="fleet-sort"
            />
          ) : null}
        </Row>
        {wide || open ? filters : null}
        {wide && choosing ? (
          <Card>
            <Choices
              label="Columns shown (press to hide or show)"
              choices={choosableColumns.map((c) => ({ value: c.id, label: filter.hidden.includes(c.id) ? `○ ${c.label}` : `● ${c.label}` }))}
              value={undefined}
              onChange={(id) => onFilter({ ...filter, hidden: filter.hidden.includes(id) ? filter.hidden.filter((h) => h !== id) : [...filter.hidden, id] })}
              testID="column-chooser"
            />
          </Card>
        ) : null}
      </View>
      {state.isPending ? (
        <FleetSkeleton wide={wide} />
      ) : state.error && !state.data ? (
        <View style={{ gap: space.sm }}>
          <Notice title={(state.error as { title?: string }).title ?? 'Could not load the fleet'} detail={(state.error as { detail?: string }).detail ?? state.error.message} />
          <View style={{ alignSelf: 'flex-start' }}>
            <Button label="Try again" variant="secondary" onPress={() => state.refetch()} />
          </View>
        </View>
      ) : state.data && !state.data.rows.length ? (
        active ? (
          <EmptyState title="No loggers match" detail="Loosen a filter or clear them all to see the whole fleet." />
        ) : (
          <EmptyState
            title="No loggers yet"
            detail={canRegister ? 'Register loggers one at a time or upload a CSV batch; each gets a QR label for enrollment.' : 'Loggers appear here once an admin or integrator registers them.'}
            action={canRegister ? <Button label="Register loggers" onPress={onRegister} /> : undefined}
          />
        )
      ) : state.data ? (
        <View style={{ gap: space.md }}>
          {state.error ? <Notice title={(state.error as { title?: string }).title ?? 'Could not refresh'} detail={(state.error as { detail?: string }).detail ?? state.error.message} /> : null}
          {wide ? (
            <FleetTable
              rows={state.data.rows}
              total={state.data.total}
              sort={filter.sort}
              dir={filter.dir}
              page={filter.page}
              pageSize={filter.pageSize}
              hidden={filter.hidden}
              busy={state.isFetching}
              onSort={(sort, dir) => set({ sort, dir })}
              onOpen={onOpen}
            />
          ) : (
            <View style={{ gap: space.sm, opacity: state.isFetching ? 0.7 : 1 }}>
              {state.data.rows.map((r) => (
                <FleetCard key={r.id} row={r} onOpen={onOpen} />
              ))}
            </View>
          )}
          <Pager total={state.data.total} totalIsEstimate={state.data.totalIsEstimate} page={filter.page} pageSize={filter.pageSize} wide={wide} onPage={(page) => onFilter({ ...filter, page })} onPageSize={(pageSize) => set({ pageSize })} />
        </View>
      ) : null}
      {!wide ? <Text style={type.small}>Tip: a link to this page keeps its filters.</Text> : null}
    </Page>
  );
}
