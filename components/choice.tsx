// A row of choices (status filters, channels, board revisions, probe resolutions): 44 px targets,
// the chosen one marked by weight, colour and aria-checked.
import React from 'react';
import { Pressable, StyleSheet, Text, View } from 'react-native';
import { colors, fonts, radii, space, touchTarget, type } from './theme';

export type Choice<T extends string | number> = { value: T; label: string; hint?: string };

export function Choices<T extends string | number>({
  label,
  choices,
  value,
  onChange,
  error,
  testID,
}: {
  label?: string;
  choices: readonly Choice<T>[];
  value: T | undefined;
  onChange: (value: T) => void;
  error?: string;
  testID?: string;
}) {
  return (
    <View style={{ gap: space.xs }} testID={testID}>
      {label ? <Text style={type.label}>{label}</Text> : null}
      <View role="radiogroup" aria-label={label} style={styles.row}>
        {choices.map((c) => {
          const on = c.value === value;
          return (
            <Pressable
              key={String(c.value)}
              role="radio"
              aria-checked={on}
              aria-label={c.label}
              onPress={() => onChange(c.value)}
              style={[styles.chip, on && styles.chipOn]}
            >
              <Text style={[type.body, { fontFamily: on ? fonts.semibold : fonts.regular }]}>{c.label}</Text>
              {c.hint ? <Text style={type.small}>{c.hint}</Text> : null}
            </Pressable>
          );
        })}
      </View>
      {error ? (
        <Text role="alert" style={[type.small, { color: colors.ember }]}>
          {error}
        </Text>
      ) : null}
    </View>
  );
}

const styles = StyleSheet.create({
  row: { flexDirection: 'row', flexWrap: 'wrap', gap: space.sm },
  chip: {
    minHeight: touchTarget,
    minWidth: touchTarget,
    paddingHorizontal: space.md,
    paddingVertical: space.xs,
    borderRadius: radii.md,
    borderWidth: 1,
    borderColor: colors.line,
    backgroundColor: colors.surface,
    justifyContent: 'center',
    alignItems: 'center',
  },
  chipOn: { borderColor: colors.ink, borderWidth: 2, backgroundColor: colors.paperDeep },
});
