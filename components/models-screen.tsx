// Models and their board revisions; admins add and edit them (limits of the measurement hardware,
// supply guard, check-in interval). The signing rule is changed on the model's signing page (model-signing.tsx).
import React from 'react';
import { StyleSheet, Text, View } from 'react-native';
import { Page } from './shell';
import { Badge, Button, Card, EmptyState, Field, Mono, Notice, Row } from './ui';
import { QueryView, type QueryState } from './query-state';
import { colors, space, type } from './theme';
import type { List } from '../schemas/common';
import type { Board, Model, ModelInput } from '../hooks/models';
import type { ApiError } from '../hooks/api';
import { tempResolutionBitsOptions } from '../schemas/loggers';

type Save = { busy: boolean; error: unknown; run: (input: ModelInput, done: () => void) => void };

export function ModelsScreen({
  state,
  canCreate,
  create,
  update,
  onOpenSigning,
}: {
  state: QueryState<List<Model>>;
  /** Opens a model's signing rule and trust sets (admins and release engineers, who hold the keys). */
  onOpenSigning?: (id: string) => void;
  /** Whether the person may add models (the session's `can.createModel`); editing one follows its own `can`. */
  canCreate: boolean;
  create: Save;
  update: (id: string) => Save;
}) {
  const [creating, setCreating] = React.useState(false);
  const [editing, setEditing] = React.useState<string | null>(null);
  return (
    <Page title="Models" subtitle="Logger hardware, its board revisions and measurement limits" actions={canCreate && !creating ? <Button label="Add model" onPress={() => setCreating(true)} testID="add-model" /> : undefined}>
      {creating ? (
        <Card>
          <Text style={type.heading}>New model</Text>
          <ModelForm submitLabel="Add model" save={create} onDone={() => setCreating(false)} onCancel={() => setCreating(false)} />
        </Card>
      ) : null}
      <QueryView state={state}>
        {(data) =>
          data.rows.length ? (
            <View style={{ gap: space.md }}>
              {data.rows.map((m) =>
                editing === m.id ? (
                  <Card key={m.id}>
                    <Text style={type.heading}>Edit {m.name}</Text>
                    <ModelForm initial={m} submitLabel="Save changes" save={update(m.id)} onDone={() => setEditing(null)} onCancel={() => setEditing(null)} />
                  </Card>
                ) : (
                  <ModelCard key={m.id} model={m} onEdit={m.can.edit ? () => setEditing(m.id) : undefined} onOpenSigning={onOpenSigning ? () => onOpenSigning(m.id) : undefined} />
                ),
              )}
            </View>
          ) : (
            <EmptyState title="No models yet" detail={canCreate ? 'Add the logger model and its board revisions before registering loggers.' : 'An admin adds models.'} />
          )
        }
      </QueryView>
    </Page>
  );
}

function ModelCard({ model, onEdit, onOpenSigning }: { model: Model; onEdit?: () => void; onOpenSigning?: () => void }) {
  return (
    <Card>
      <Row style={{ justifyContent: 'space-between' }} wrap>
        <Text style={type.heading}>{model.name}</Text>
        <Badge label={`${model.loggerCount} ${model.loggerCount === 1 ? 'logger' : 'loggers'}`} tone="slate" />
      </Row>
      <View style={{ gap: 2 }}>
        {model.boards.map((b) => (
          <Text key={b.label} style={type.body}>
            <Mono>Board {b.label}</Mono> — {b.note}
          </Text>
        ))}
      </View>
      <View style={styles.facts}>
        <Fact label="Supply guard">{`${model.minUpdateSupplyV} V minimum to update`}</Fact>
        <Fact label="Signing rule">{`${model.signingThreshold} signature${model.signingThreshold === 1 ? '' : 's'} by distinct keys per release`}</Fact>
        <Fact label="Check-in every">{`${model.checkInIntervalS / 60} min`}</Fact>
        <Fact label="Panel voltage limit">{`${model.busVMax} V`}</Fact>
        <Fact label="Shunt full scale">{`${Number((model.shuntFullScaleV * 1000).toPrecision(4))} mV`}</Fact>
        <Fact label="Probe resolutions">{`${model.tempResolutions.join(', ')} bits`}</Fact>
      </View>
      {onEdit || onOpenSigning ? (
        <Row wrap>
          {onOpenSigning ? <Button label="Signing and trust set" variant="secondary" onPress={onOpenSigning} testID={`model-signing-${model.name}`} /> : null}
          {onEdit ? <Button label="Edit" variant="secondary" onPress={onEdit} /> : null}
        </Row>
      ) : null}
    </Card>
  );
}

function Fact({ label, children }: { label: string; children: string }) {
  return (
    <View style={{ minWidth: 150, flexBasis: 150, flexGrow: 1, gap: 2 }}>
      <Text style={type.label}>{label}</Text>
      <Text style={type.body}>{children}</Text>
    </View>
  );
}

const num = (s: string) => Number(s.trim().replace(',', '.'));

function ModelForm({ initial, submitLabel, save, onDone, onCancel }: { initial?: Model; submitLabel: string; save: Save; onDone: () => void; onCancel: () => void }) {
  const [name, setName] = React.useState(initial?.name ?? '');
  const [boards, setBoards] = React.useState<Board[]>(initial?.boards ?? [{ label: 'A', note: '' }]);
  const [supply, setSupply] = React.useState(String(initial?.minUpdateSupplyV ?? '4.6'));
  const [interval, setInterval_] = React.useState(String(initial?.checkInIntervalS ?? '900'));
  const [bus, setBus] = React.useState(String(initial?.busVMax ?? '36'));
  const [shuntMv, setShuntMv] = React.useState(initial ? String(Number((initial.shuntFullScaleV * 1000).toPrecision(6))) : '81.92');
  const [bits, setBits] = React.useState<number[]>(initial?.tempResolutions ?? [9, 10, 11, 12]);
  const [local, setLocal] = React.useState<Record<string, string>>({});
  const error = save.error as ApiError | null;
  const fe = (p: string) => local[p] ?? error?.field?.(p);

  const submit = () => {
    const problems: Record<string, string> = {};
    if (!name.trim()) problems.name = 'is required';
    if (!boards.length || boards.some((b) => !b.label.trim())) problems.boards = 'every board revision needs a label';
    for (const [k, v] of Object.entries({ minUpdateSupplyV: supply, checkInIntervalS: interval, busVMax: bus, shuntFullScaleV: shuntMv })) {
      if (!(num(v) > 0)) problems[k] = 'must be a number above 0';
    }
    if (!bits.length) problems.tempResolutions = 'allow at least one resolution';
    setLocal(problems);
    if (Object.keys(problems).length) return;
    save.run(
      {
        name: name.trim(),
        boards: boards.map((b) => ({ label: b.label.trim(), note: b.note.trim() })),
        minUpdateSupplyV: num(supply),
        checkInIntervalS: Math.round(num(interval)),
        busVMax: num(bus),
        shuntFullScaleV: Number((num(shuntMv) / 1000).toPrecision(12)),
        tempResolutions: [...bits].sort((a, b) => a - b),
      },
      onDone,
    );
  };

  return (
    <View style={{ gap: space.md }}>
      <Field label="Name" value={name} onChangeText={setName} error={fe('name')} placeholder="FL-2 field logger" />
      <View style={{ gap: space.sm }}>
        <Text style={type.label}>Board revisions</Text>
        {boards.map((b, i) => (
          <Row key={i} gap={space.sm} style={{ alignItems: 'flex-end' }}>
            <View style={{ width: 80 }}>
              <Field label="Label" value={b.label} onChangeText={(v) => setBoards(boards.map((x, j) => (j === i ? { ...x, label: v } : x)))} />
            </View>
            <View style={{ flex: 1 }}>
              <Field label="Note" value={b.note} onChangeText={(v) => setBoards(boards.map((x, j) => (j === i ? { ...x, note: v } : x)))} placeholder="What changed on this board" />
            </View>
            {boards.length > 1 ? <Button label="Remove" variant="quiet" onPress={() => setBoards(boards.filter((_, j) => j !== i))} /> : null}
          </Row>
        ))}
        {fe('boards') ? <Text style={[type.small, { color: colors.ember }]}>{fe('boards')}</Text> : null}
        <View style={{ alignSelf: 'flex-start' }}>
          <Button label="Add board revision" variant="secondary" onPress={() => setBoards([...boards, { label: '', note: '' }])} />
        </View>
      </View>
      <View style={styles.facts}>
        <Half>
          <Field label="Supply guard (V)" value={supply} onChangeText={setSupply} inputMode="decimal" error={fe('minUpdateSupplyV')} hint="No update below this supply voltage" />
        </Half>
        <Half>
          <Field label="Check-in interval (s)" value={interval} onChangeText={setInterval_} inputMode="numeric" error={fe('checkInIntervalS')} />
        </Half>
        <Half>
          <Field label="Bus voltage limit (V)" value={bus} onChangeText={setBus} inputMode="decimal" error={fe('busVMax')} />
        </Half>
        <Half>
          <Field label="Shunt full scale (mV)" value={shuntMv} onChangeText={setShuntMv} inputMode="decimal" error={fe('shuntFullScaleV')} />
        </Half>
      </View>
      <View style={{ gap: space.xs }}>
        <Text style={type.label}>Probe resolutions allowed</Text>
        <Row gap={space.sm} wrap>
          {tempResolutionBitsOptions.map((b) => {
            const on = bits.includes(b);
            return <Button key={b} label={`${on ? '✓ ' : ''}${b} bits`} variant={on ? 'primary' : 'secondary'} onPress={() => setBits(on ? bits.filter((x) => x !== b) : [...bits, b])} />;
          })}
        </Row>
        {fe('tempResolutions') ? <Text style={[type.small, { color: colors.ember }]}>{fe('tempResolutions')}</Text> : null}
      </View>
      {error && !error.fieldErrors?.length ? <Notice title={error.title} detail={error.detail} /> : null}
      <Row gap={space.sm}>
        <Button label={submitLabel} onPress={submit} busy={save.busy} />
        <Button label="Cancel" variant="secondary" onPress={onCancel} />
      </Row>
    </View>
  );
}

function Half({ children }: { children: React.ReactNode }) {
  return <View style={{ flexBasis: 220, flexGrow: 1 }}>{children}</View>;
}

const styles = StyleSheet.create({ facts: { flexDirection: 'row', flexWrap: 'wrap', gap: space.md } });
