// Small controls the release, signing-key and token screens share: a confirmation dialog, choice
// chips (checkboxes), a segmented choice (radio group), a switch row and a problem notice.
import React from 'react';
import { Modal, Pressable, StyleSheet, Switch, Text, TextInput, View } from 'react-native';
import { Button, Notice, Row } from './ui';
import { colors, fonts, radii, space, toneColors, touchTarget, type, type Tone } from './theme';

/** The parts of an ApiError a screen shows: title, detail and the fields the server named. */
export type ProblemLike = { title?: string; detail?: string; message?: string; fieldErrors?: { path: string; message: string }[] } | null | undefined;

export function ProblemNotice({ error, fieldNames = {} }: { error: ProblemLike; fieldNames?: Record<string, string> }) {
  if (!error) return null;
  const detail = error.detail ?? error.message;
  const all = error.fieldErrors ?? [];
  // A field whose message repeats the detail is named once, not said twice.
  const named = all.filter((f) => f.message === detail).map((f) => fieldNames[f.path] ?? f.path);
  const fields = all.filter((f) => f.message !== detail);
  return (
    <Notice title={error.title ?? 'Something went wrong'} detail={detail}>
      {named.length ? (
        <Text style={type.body}>
          Refused: <Text style={{ fontFamily: fonts.semibold }}>{named.join(', ')}</Text>
        </Text>
      ) : null}
      {fields.map((f) => (
        <Text key={`${f.path}:${f.message}`} style={type.body}>
          <Text style={{ fontFamily: fonts.semibold }}>{fieldNames[f.path] ?? f.path}</Text>: {f.message}
        </Text>
      ))}
    </Notice>
  );
}

type ConfirmProps = {
  visible: boolean;
  title: string;
  /** What will happen, in plain words; several paragraphs allowed. */
  children?: React.ReactNode;
  confirmLabel: string;
  tone?: 'primary' | 'danger';
  /** When set, a reason field is shown and must be filled before confirming. */
  reasonLabel?: string;
  busy?: boolean;
  error?: ProblemLike;
  onConfirm: (reason: string) => void;
  onCancel: () => void;
  testID?: string;
};

/** Confirmation before a consequential action; a reason is asked for where the record needs one. */
export function ConfirmDialog({ visible, title, children, confirmLabel, tone = 'primary', reasonLabel, busy, error, onConfirm, onCancel, testID }: ConfirmProps) {
  const [reason, setReason] = React.useState('');
  React.useEffect(() => {
    if (visible) setReason('');
  }, [visible]);
  const missingReason = Boolean(reasonLabel) && reason.trim() === '';
  return (
    <Modal visible={visible} transparent animationType="none" onRequestClose={onCancel}>
      <View style={styles.backdrop}>
        <View role="dialog" aria-modal aria-label={title} testID={testID} style={styles.dialog}>
          <Text role="heading" aria-level={2} style={type.heading}>
            {title}
          </Text>
          {children}
          {reasonLabel ? (
            <View style={{ gap: space.xs }}>
              <Text style={type.label}>{reasonLabel}</Text>
              <TextInput
                aria-label={reasonLabel}
                testID={testID ? `${testID}-reason` : undefined}
                value={reason}
                onChangeText={setReason}
                multiline
                placeholder="Why — this goes into the release's history"
                placeholderTextColor={colors.inkFaint}
                style={[styles.input, { minHeight: touchTarget * 2 }]}
              />
            </View>
          ) : null}
          <ProblemNotice error={error} />
          <Row wrap style={{ justifyContent: 'flex-end' }}>
            <Button label="Cancel" variant="secondary" onPress={onCancel} testID={testID ? `${testID}-cancel` : undefined} />
            <Button
              label={confirmLabel}
              variant={tone}
              busy={busy}
              disabled={missingReason}
              onPress={() => onConfirm(reason.trim())}
              testID={testID ? `${testID}-confirm` : undefined}
            />
          </Row>
        </View>
      </View>
    </Modal>
  );
}

/** A toggle chip that behaves as a checkbox (boards, pilot sites, scopes). */
export function ChoiceChip({ label, checked, onToggle, mono, testID, disabled }: { label: string; checked: boolean; onToggle: () => void; mono?: boolean; testID?: string; disabled?: boolean }) {
  return (
    <Pressable
      role="checkbox"
      aria-checked={checked}
      aria-label={label}
      aria-disabled={disabled}
      disabled={disabled}
      testID={testID}
      onPress={onToggle}
      style={[styles.chip, checked && styles.chipOn, disabled && { opacity: 0.5 }]}
    >
      <View style={[styles.box, checked && styles.boxOn]}>{checked ? <Text style={styles.tick}>✓</Text> : null}</View>
      <Text style={[type.body, mono && { fontFamily: fonts.mono }, checked && { fontFamily: mono ? fonts.monoMedium : fonts.semibold }]}>{label}</Text>
    </Pressable>
  );
}

/** One choice of a few (channel, filters): a radio group drawn as segments. */
export function Segmented<T extends string>({ label, value, options, onChange, testID }: { label: string; value: T; options: { value: T; label: string }[]; onChange: (v: T) => void; testID?: string }) {
  return (
    <View style={{ gap: space.xs }}>
      <Text style={type.label}>{label}</Text>
      <View role="radiogroup" aria-label={label} testID={testID} style={styles.segments}>
        {options.map((o) => {
          const on = o.value === value;
          return (
            <Pressable key={o.value} role="radio" aria-checked={on} aria-label={o.label} onPress={() => onChange(o.value)} style={[styles.segment, on && styles.segmentOn]}>
              <Text style={[type.body, { fontSize: 14 }, on && { fontFamily: fonts.semibold }]}>{o.label}</Text>
            </Pressable>
          );
        })}
      </View>
    </View>
  );
}

export function SwitchRow({ label, hint, value, onChange, testID }: { label: string; hint?: string; value: boolean; onChange: (v: boolean) => void; testID?: string }) {
  return (
    <Pressable role="switch" aria-checked={value} aria-label={label} testID={testID} onPress={() => onChange(!value)} style={styles.switchRow}>
      <View style={{ flex: 1, gap: 2 }}>
        <Text style={type.body}>{label}</Text>
        {hint ? <Text style={type.small}>{hint}</Text> : null}
      </View>
      {/* Drawn only: the whole row is the control, so a press toggles once. */}
      <View pointerEvents="none" aria-hidden>
        <Switch value={value} trackColor={{ true: colors.moss, false: colors.line }} thumbColor={colors.surface} />
      </View>
      <Text style={[type.label, { minWidth: 24 }]}>{value ? 'On' : 'Off'}</Text>
    </Pressable>
  );
}

/** A coloured word with a little more weight than a badge, for a state at the top of a page. */
export function ToneText({ tone, children }: { tone: Tone; children: React.ReactNode }) {
  return <Text style={[type.body, { color: toneColors[tone].fg, fontFamily: fonts.semibold }]}>{children}</Text>;
}

const styles = StyleSheet.create({
  backdrop: { flex: 1, backgroundColor: 'rgba(30, 42, 47, 0.45)', alignItems: 'center', justifyContent: 'center', padding: space.lg },
  dialog: { backgroundColor: colors.surface, borderRadius: radii.lg, padding: space.xl, gap: space.md, width: '100%', maxWidth: 520, borderColor: colors.line, borderWidth: 1 },
  input: { borderWidth: 1, borderColor: colors.line, borderRadius: radii.md, paddingHorizontal: space.md, paddingVertical: space.sm, fontFamily: fonts.regular, fontSize: 15, color: colors.ink, backgroundColor: colors.surface },
  chip: { flexDirection: 'row', alignItems: 'center', gap: space.sm, minHeight: touchTarget, paddingHorizontal: space.md, borderRadius: radii.md, borderWidth: 1, borderColor: colors.line, backgroundColor: colors.surface },
  chipOn: { borderColor: colors.ink, backgroundColor: colors.paperDeep },
  box: { width: 20, height: 20, borderRadius: 4, borderWidth: 1.5, borderColor: colors.inkSoft, alignItems: 'center', justifyContent: 'center' },
  boxOn: { backgroundColor: colors.ink, borderColor: colors.ink },
  tick: { color: colors.onInk, fontSize: 13, lineHeight: 16, fontFamily: fonts.bold },
  segments: { flexDirection: 'row', borderWidth: 1, borderColor: colors.line, borderRadius: radii.md, overflow: 'hidden', alignSelf: 'flex-start', flexWrap: 'wrap' },
  segment: { minHeight: touchTarget, paddingHorizontal: space.md, alignItems: 'center', justifyContent: 'center', backgroundColor: colors.surface },
  segmentOn: { backgroundColor: colors.heliodor },
  switchRow: { flexDirection: 'row', alignItems: 'center', gap: space.md, minHeight: touchTarget },
});
