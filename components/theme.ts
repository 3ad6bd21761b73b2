import { Platform, type TextStyle } from 'react-native';

// Heliodor's design tokens (docs/DESIGN.md). Components take colours, spacing and type from here only.
export const colors = {
  ink: '#1E2A2F',
  paper: '#F7F5EE',
  surface: '#FFFFFF',
  line: '#D9D4C7',
  heliodor: '#C8A82C',
  moss: '#2F7A55',
  ember: '#B5542B',
  amber: '#B98412',
  slate: '#4F6D7A',
  inkSoft: '#4A5A61',
  // 5.0:1 on paper, 5.5:1 on surface (WCAG 2.1 AA 1.4.3 asks 4.5:1 for text); #6F7C80 was 3.95:1 on paper.
  inkFaint: '#5F6B70',
  paperDeep: '#EFEBDF',
  emberWash: '#F8E9E2',
  amberWash: '#F7EFD9',
  mossWash: '#E3F0E8',
  slateWash: '#E4ECEF',
  onInk: '#F7F5EE',
  // Text and borders on a status tint: a darker ink of the same hue (docs/DESIGN.md), each ≥ 5.7:1 on its tint
  // and on surface (WCAG 2.1 AA 1.4.3: 4.5:1). The status colours above stay for fills, bars and icons.
  mossInk: '#24603F',
  emberInk: '#9A3F1C',
  amberInk: '#7A5608',
  slateInk: '#3E5A66',
} as const;

export const space = { xs: 4, sm: 8, md: 12, lg: 16, xl: 24, xxl: 32 } as const;
export const radii = { sm: 4, md: 8, lg: 12 } as const;

// On the web the shipped faces arrive after the first screen (app/_layout.tsx): until then, the system's.
const sans = (face: string) => (Platform.OS === 'web' ? `${face}, system-ui, sans-serif` : face);
const mono = (face: string) => (Platform.OS === 'web' ? `${face}, ui-monospace, monospace` : face);

export const fonts = {
  regular: sans('IBMPlexSans_400Regular'),
  medium: sans('IBMPlexSans_500Medium'),
  semibold: sans('IBMPlexSans_600SemiBold'),
  bold: sans('IBMPlexSans_700Bold'),
  mono: mono('IBMPlexMono_400Regular'),
  monoMedium: mono('IBMPlexMono_500Medium'),
} as const;

export const type = {
  body: { fontFamily: fonts.regular, fontSize: 15, lineHeight: 22, color: colors.ink },
  dense: { fontFamily: fonts.regular, fontSize: 14, lineHeight: 20, color: colors.ink },
  small: { fontFamily: fonts.regular, fontSize: 13, lineHeight: 18, color: colors.inkSoft },
  label: { fontFamily: fonts.medium, fontSize: 13, lineHeight: 18, color: colors.inkSoft, letterSpacing: 0.2 },
  title: { fontFamily: fonts.semibold, fontSize: 22, lineHeight: 28, color: colors.ink },
  heading: { fontFamily: fonts.semibold, fontSize: 17, lineHeight: 24, color: colors.ink },
  figure: { fontFamily: fonts.semibold, fontSize: 28, lineHeight: 34, color: colors.ink, fontVariant: ['tabular-nums'] },
  mono: { fontFamily: fonts.mono, fontSize: 14, lineHeight: 20, color: colors.ink },
} satisfies Record<string, TextStyle>;

/** Minimum touch target (docs/DESIGN.md: 44 px; gloves on a roof). */
export const touchTarget = 44;
/** A link that stands alone (not inside a sentence) on a 22 px line: padded to the 44 px target (WCAG 2.1 SC 2.5.5). */
export const linkTarget = { minHeight: touchTarget, minWidth: touchTarget, paddingVertical: (touchTarget - 22) / 2, alignSelf: 'flex-start' } as const;

export type Tone = 'moss' | 'ember' | 'amber' | 'slate' | 'ink';
/** fg: fills, bars and icons; text: words and borders on the tint bg (or on surface/paper); bg: the tint. */
export const toneColors: Record<Tone, { fg: string; text: string; bg: string }> = {
  moss: { fg: colors.moss, text: colors.mossInk, bg: colors.mossWash },
  ember: { fg: colors.ember, text: colors.emberInk, bg: colors.emberWash },
  amber: { fg: colors.amber, text: colors.amberInk, bg: colors.amberWash },
  slate: { fg: colors.slate, text: colors.slateInk, bg: colors.slateWash },
  ink: { fg: colors.ink, text: colors.ink, bg: colors.paperDeep },
};
