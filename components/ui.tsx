// Presentational building blocks. No fetching here: screens pass data in.
import React from 'react';
import { ActivityIndicator, Pressable, StyleSheet, Text, TextInput, View, type TextInputProps, type ViewStyle, type StyleProp } from 'react-native';
import { colors, fonts, radii, space, toneColors, touchTarget, type, type Tone } from './theme';

export function Heading({ children, level = 1 }: { children: React.ReactNode; level?: 1 | 2 }) {
  return (
    <Text role="heading" aria-level={level} style={level === 1 ? type.title : type.heading}>
      {children}
    </Text>
  );
}

export function Body({ children, style, muted }: { children: React.ReactNode; style?: object; muted?: boolean }) {
  return <Text style={[type.body, muted && { color: colors.inkSoft }, style]}>{children}</Text>;
}

export function Mono({ children, style }: { children: React.ReactNode; style?: object }) {
  return <Text style={[type.mono, style]}>{children}</Text>;
}

export function Card({ children, style, testID }: { children: React.ReactNode; style?: StyleProp<ViewStyle>; testID?: string }) {
  return (
    <View testID={testID} style={[styles.card, style]}>
      {children}
    </View>
  );
}

type ButtonProps = {
  label: string;
  onPress?: () => void;
  variant?: 'primary' | 'secondary' | 'danger' | 'quiet';
  disabled?: boolean;
  busy?: boolean;
  testID?: string;
  accessibilityHint?: string;
};

export function Button({ label, onPress, variant = 'primary', disabled, busy, testID, accessibilityHint }: ButtonProps) {
  const off = disabled || busy;
  return (
    <Pressable
      role="button"
      aria-disabled={off}
      aria-label={label}
      accessibilityHint={accessibilityHint}
      testID={testID}
      disabled={off}
      onPress={onPress}
      style={({ pressed, hovered, focused }: { pressed: boolean; hovered?: boolean; focused?: boolean }) => [
        styles.button,
        buttonVariants[variant],
        (pressed || hovered) && !off && { opacity: 0.88 },
        focused && styles.focus,
        off && { opacity: 0.5 },
      ]}
    >
      {busy ? <ActivityIndicator color={variant === 'primary' ? colors.ink : colors.surface} style={{ marginRight: space.sm }} /> : null}
      <Text style={[styles.buttonText, { color: variant === 'primary' || variant === 'secondary' || variant === 'quiet' ? colors.ink : colors.surface }]}>
        {label}
      </Text>
    </Pressable>
  );
}

const buttonVariants = StyleSheet.create({
  primary: { backgroundColor: colors.heliodor, borderColor: colors.heliodor },
  secondary: { backgroundColor: colors.surface, borderColor: colors.line },
  danger: { backgroundColor: colors.ember, borderColor: colors.ember },
  quiet: { backgroundColor: 'transparent', borderColor: 'transparent' },
});

type FieldProps = TextInputProps & { label: string; error?: string; hint?: string; mono?: boolean };

export function Field({ label, error, hint, mono, style, ...input }: FieldProps) {
  const id = React.useId();
  return (
    <View style={styles.field}>
      <Text nativeID={`${id}-label`} style={type.label}>
        {label}
      </Text>
      <TextInput
        aria-labelledby={`${id}-label`}
        aria-invalid={Boolean(error)}
        placeholderTextColor={colors.inkFaint}
        style={[styles.input, mono && { fontFamily: fonts.mono }, error ? { borderColor: colors.ember } : null, style]}
        {...input}
      />
      {error ? (
        <Text role="alert" style={[type.small, { color: colors.emberInk }]}>
          {error}
        </Text>
      ) : hint ? (
        <Text style={type.small}>{hint}</Text>
      ) : null}
    </View>
  );
}

/** A coloured word: status is never carried by colour alone. */
export function Badge({ label, tone = 'slate', testID }: { label: string; tone?: Tone; testID?: string }) {
  const c = toneColors[tone];
  return (
    <View testID={testID} style={[styles.badge, { backgroundColor: c.bg, borderColor: c.text }]}>
      <Text style={[type.label, { color: c.text, fontSize: 12 }]}>{label}</Text>
    </View>
  );
}

export function Notice({ title, detail, tone = 'ember', children }: { title: string; detail?: string; tone?: Tone; children?: React.ReactNode }) {
  const c = toneColors[tone];
  return (
    <View role={tone === 'ember' ? 'alert' : undefined} style={[styles.notice, { backgroundColor: c.bg, borderLeftColor: c.fg }]}>
      <Text style={[type.body, { fontFamily: fonts.semibold, color: c.text }]}>{title}</Text>
      {detail ? <Text style={type.body}>{detail}</Text> : null}
      {children}
    </View>
  );
}

export function EmptyState({ title, detail, action }: { title: string; detail: string; action?: React.ReactNode }) {
  return (
    <View style={styles.empty}>
      <Text style={type.heading}>{title}</Text>
      <Text style={[type.body, { color: colors.inkSoft, textAlign: 'center' }]}>{detail}</Text>
      {action}
    </View>
  );
}

export function Skeleton({ rows = 3, height = 20 }: { rows?: number; height?: number }) {
  return (
    <View role="progressbar" aria-busy aria-label="Loading" style={{ gap: space.sm }}>
      {Array.from({ length: rows }, (_, i) => (
        <View key={i} style={{ height, borderRadius: radii.sm, backgroundColor: colors.paperDeep, width: `${90 - i * 12}%` }} />
      ))}
    </View>
  );
}

/** A bar from 0 to 100; its accessible name is the visible `label`, or `name` when the words stand beside it. */
export function ProgressBar({ value, label, name, tone = 'moss' }: { value: number; tone?: Tone } & ({ label: string; name?: string } | { label?: undefined; name: string })) {
  const pct = Math.max(0, Math.min(100, value));
  return (
    <View style={{ gap: space.xs }}>
      {label ? <Text style={type.small}>{label}</Text> : null}
      <View role="progressbar" aria-label={name ?? label} aria-valuenow={Math.round(pct)} aria-valuemin={0} aria-valuemax={100} style={styles.progressTrack}>
        <View style={[styles.progressFill, { width: `${pct}%`, backgroundColor: toneColors[tone].fg }]} />
      </View>
    </View>
  );
}

export function Row({ children, gap = space.sm, wrap, style }: { children: React.ReactNode; gap?: number; wrap?: boolean; style?: StyleProp<ViewStyle> }) {
  return <View style={[{ flexDirection: 'row', alignItems: 'center', gap }, wrap && { flexWrap: 'wrap' }, style]}>{children}</View>;
}

const styles = StyleSheet.create({
  card: { backgroundColor: colors.surface, borderColor: colors.line, borderWidth: 1, borderRadius: radii.md, padding: space.lg, gap: space.sm },
  button: {
    minHeight: touchTarget,
    paddingHorizontal: space.lg,
    borderRadius: radii.md,
    borderWidth: 1,
    flexDirection: 'row',
    alignItems: 'center',
    justifyContent: 'center',
  },
  buttonText: { fontFamily: fonts.semibold, fontSize: 15 },
  focus: { outlineColor: colors.heliodor, outlineWidth: 3, outlineStyle: 'solid' } as object,
  field: { gap: space.xs },
  input: {
    minHeight: touchTarget,
    borderWidth: 1,
    borderColor: colors.line,
    borderRadius: radii.md,
    backgroundColor: colors.surface,
    paddingHorizontal: space.md,
    fontFamily: fonts.regular,
    fontSize: 15,
    color: colors.ink,
  },
  badge: { borderWidth: 1, borderRadius: radii.sm, paddingHorizontal: space.sm, paddingVertical: 2, alignSelf: 'flex-start' },
  notice: { borderLeftWidth: 4, borderRadius: radii.sm, padding: space.md, gap: space.xs },
  empty: { alignItems: 'center', gap: space.sm, paddingVertical: space.xxl, paddingHorizontal: space.lg },
  progressTrack: { height: 10, borderRadius: 5, backgroundColor: colors.paperDeep, overflow: 'hidden' },
  progressFill: { height: '100%', borderRadius: 5 },
});

/** A labelled button that shows or hides what it holds (closed at first): figures an installer rarely needs. */
export function Disclosure({ label, children, testID }: { label: string; children: React.ReactNode; testID?: string }) {
  const [open, setOpen] = React.useState(false);
  return (
    <View style={{ gap: space.sm }}>
      <Pressable
        role="button"
        aria-expanded={open}
        onPress={() => setOpen(!open)}
        testID={testID}
        style={{ minHeight: touchTarget, justifyContent: 'center', alignSelf: 'flex-start' }}
      >
        <Text style={[type.body, { textDecorationLine: 'underline' }]}>{`${open ? '▾' : '▸'} ${label}`}</Text>
      </Pressable>
      {open ? children : null}
    </View>
  );
}
