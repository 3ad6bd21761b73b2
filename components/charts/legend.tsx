import React from 'react';
import { Text, View } from 'react-native';
import { Row } from '../ui';
import { fonts, space, type } from '../theme';

export function Legend({ items, mono }: { items: { label: string; color: string; value?: string }[]; mono?: boolean }) {
  return (
    <Row wrap gap={space.md} style={{ rowGap: space.xs }}>
      {items.map((i) => (
        <Row key={i.label} gap={space.xs}>
          <View style={{ width: 12, height: 12, borderRadius: 2, backgroundColor: i.color }} />
          <Text style={[type.small, mono && { fontFamily: fonts.mono }]}>
            {i.label}
            {i.value ? ` · ${i.value}` : ''}
          </Text>
        </Row>
      ))}
    </Row>
  );
}
