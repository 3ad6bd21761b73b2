// Chart colours from the theme only (DESIGN.md), in an order that keeps neighbours apart; the legend
// beside every chart carries the words, so no series is told by colour alone.
import { colors } from '../theme';

export const seriesColors = [colors.moss, colors.slate, colors.heliodor, colors.ember, colors.amber, colors.ink, colors.inkFaint, colors.mossWash] as const;

export const seriesColor = (i: number) => seriesColors[i % seriesColors.length];
