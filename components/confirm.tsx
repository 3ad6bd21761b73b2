// Confirmation before consequential actions (docs/DESIGN.md): a modal that names the consequence.
import React from 'react';
import { Modal, Pressable, StyleSheet, Text, View } from 'react-native';
import { Button, Row } from './ui';
import { colors, radii, space, type } from './theme';

type Props = {
  visible: boolean;
  title: string;
  detail?: string;
  confirmLabel: string;
  cancelLabel?: string;
  danger?: boolean;
  busy?: boolean;
  onConfirm: () => void;
  onCancel: () => void;
  children?: React.ReactNode;
};

export function ConfirmDialog({ visible, title, detail, confirmLabel, cancelLabel = 'Cancel', danger, busy, onConfirm, onCancel, children }: Props) {
  return (
    <Modal visible={visible} transparent animationType="none" onRequestClose={onCancel}>
      <View style={styles.backdrop}>
        <Pressable style={styles.cover} onPress={onCancel} aria-label="Close" />
        <View role="alertdialog" aria-label={title} style={styles.dialog}>
          <Text role="heading" aria-level={2} style={type.heading}>
            {title}
          </Text>
          {detail ? <Text style={type.body}>{detail}</Text> : null}
          {children}
          <Row gap={space.sm} wrap style={{ justifyContent: 'flex-end', marginTop: space.sm }}>
            <Button label={cancelLabel} variant="secondary" onPress={onCancel} />
            <Button label={confirmLabel} variant={danger ? 'danger' : 'primary'} busy={busy} onPress={onConfirm} testID="confirm" />
          </Row>
        </View>
      </View>
    </Modal>
  );
}

/** A theme colour with opacity, as rgba() (every browser reads it). */
function withAlpha(hex: string, alpha: number): string {
  const n = parseInt(hex.slice(1), 16);
  return `rgba(${(n >> 16) & 255}, ${(n >> 8) & 255}, ${n & 255}, ${alpha})`;
}

const styles = StyleSheet.create({
  backdrop: { flex: 1, backgroundColor: withAlpha(colors.ink, 0.45), alignItems: 'center', justifyContent: 'center', padding: space.lg },
  cover: { position: 'absolute', top: 0, right: 0, bottom: 0, left: 0 },
  dialog: { backgroundColor: colors.surface, borderRadius: radii.lg, padding: space.xl, gap: space.md, width: '100%', maxWidth: 460, borderColor: colors.line, borderWidth: 1 },
});
