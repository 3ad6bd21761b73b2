// The cautions shown wherever someone is about to touch a logger's wiring on site: enrolling it,
// changing its measurement profile, moving it to another site. They defer to local codes and
// licensed practice; the figures are the model's limits.
import React from 'react';
import { Text } from 'react-native';
import { Notice } from './ui';
import { type } from './theme';

/** The cautions as sentences (the commissioning sheet prints them); the monitor's limits when known. */
export function wiringCautionLines(limits?: { busVMax: number; shuntFullScaleV: number } | null): string[] {
  return [
    'Isolate the array first: panels make voltage whenever light falls on them, and a DC arc does not put itself out.',
    'Fuse the measurement leads close to where they connect to the array, with a DC-rated fuse.',
    ...(limits
      ? [
          `Respect the monitor's limits: at most ${limits.busVMax} V from the panel, counting its rise in the cold, and ` +
            `${Number((limits.shuntFullScaleV * 1000).toPrecision(4))} mV across the shunt.`,
        ]
      : []),
    'Work on a roof only as the local work-at-height rules allow: edge protection, a harness or a ladder as they require.',
    'Follow the local electrical codes; wiring work is for licensed practice.',
  ];
}

export function WiringCautions({ limits, title = 'Before you connect the logger' }: { limits?: { busVMax: number; shuntFullScaleV: number } | null; title?: string }) {
  return (
    <Notice title={title} tone="amber">
      {wiringCautionLines(limits).map((line) => (
        <Text key={line} style={type.body}>
          • {line}
        </Text>
      ))}
    </Notice>
  );
}

/** The panel's temperature coefficient of Voc, asked the same way wherever wiring figures are typed. */
export const vocCoeffField = {
  label: 'Voltage change with temperature (%/°C, optional)',
  hint: 'From the panel data sheet: the temperature coefficient of Voc, e.g. -0.30',
  inputMode: 'decimal',
} as const;
