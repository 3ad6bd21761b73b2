// Charts draw at a pixel width: measure the space the layout gives them (390 px phones included).
import React from 'react';
import { View, type LayoutChangeEvent } from 'react-native';

export function Measured({ children, min = 240 }: { children: (width: number) => React.ReactNode; min?: number }) {
  const [width, setWidth] = React.useState(0);
  const onLayout = (e: LayoutChangeEvent) => setWidth(Math.floor(e.nativeEvent.layout.width));
  return (
    <View onLayout={onLayout} style={{ width: '100%' }}>
      {width ? children(Math.max(min, width)) : null}
    </View>
  );
}
