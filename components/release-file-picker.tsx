// Choosing a file: a plain <input type="file"> on the web (keyboard- and test-friendly), the system
// document picker on a phone. The picked file is handed up; nothing is read or sent here.
import React from 'react';
import { Platform, StyleSheet, Text, View } from 'react-native';
import * as DocumentPicker from 'expo-document-picker';
import { Button } from './ui';
import { colors, fonts, radii, space, touchTarget, type } from './theme';
import { bytes } from './release-badges';

export type PickedFile = { name: string; size: number; blob?: Blob; uri?: string; mimeType?: string };

type Props = {
  label: string;
  hint?: string;
  accept?: string;
  value: PickedFile | null;
  onChange: (file: PickedFile | null) => void;
  error?: string;
  testID: string;
};

export function FilePicker({ label, hint, accept, value, onChange, error, testID }: Props) {
  const id = React.useId();
  return (
    <View style={{ gap: space.xs }}>
      <Text nativeID={`${id}-label`} style={type.label}>
        {label}
      </Text>
      {Platform.OS === 'web' ? (
        <input
          type="file"
          accept={accept}
          aria-labelledby={`${id}-label`}
          aria-invalid={Boolean(error)}
          data-testid={testID}
          onChange={(e) => {
            const f = e.currentTarget.files?.[0];
            onChange(f ? { name: f.name, size: f.size, blob: f, mimeType: f.type || undefined } : null);
          }}
          style={{ ...webInput, borderColor: error ? colors.ember : colors.line }}
        />
      ) : (
        <View style={styles.native}>
          <Button
            label={value ? 'Choose another file' : 'Choose file'}
            variant="secondary"
            testID={testID}
            onPress={async () => {
              const res = await DocumentPicker.getDocumentAsync({ copyToCacheDirectory: true, multiple: false });
              const a = res.canceled ? undefined : res.assets[0];
              if (a) onChange({ name: a.name, size: a.size ?? 0, uri: a.uri, mimeType: a.mimeType });
            }}
          />
        </View>
      )}
      {value ? (
        <Text style={type.small}>
          <Text style={{ fontFamily: fonts.mono }}>{value.name}</Text> · {bytes(value.size)}
        </Text>
      ) : null}
      {error ? (
        <Text role="alert" style={[type.small, { color: colors.ember }]}>
          {error}
        </Text>
      ) : hint ? (
        <Text style={type.small}>{hint}</Text>
      ) : null}
    </View>
  );
}

const webInput: React.CSSProperties = {
  minHeight: touchTarget,
  padding: space.sm,
  borderWidth: 1,
  borderStyle: 'dashed',
  borderRadius: radii.md,
  backgroundColor: colors.surface,
  fontFamily: fonts.regular,
  fontSize: 15,
  color: colors.ink,
  boxSizing: 'border-box',
  width: '100%',
  cursor: 'pointer',
};

const styles = StyleSheet.create({ native: { alignSelf: 'flex-start' } });
