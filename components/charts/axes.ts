// The look of the axes every Heliodor chart shares (gifted-charts props): quiet lines, small labels,
// whole numbers on the y axis, no scrolling and no animation (charts are read, not played).
import { colors, fonts } from '../theme';

export const AXES = {
  yAxisTextStyle: { color: colors.inkSoft, fontFamily: fonts.regular, fontSize: 11 },
  formatYLabel: (label: string) => String(Number(Number(label).toFixed(2))),
  xAxisColor: colors.line,
  yAxisColor: colors.line,
  rulesColor: colors.line,
  disableScroll: true,
  isAnimated: false,
} as const;
