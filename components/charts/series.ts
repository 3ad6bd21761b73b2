// Chart colours from the theme only (docs/DESIGN.md), in an order that keeps neighbours apart; the legend
// beside every chart carries the words, so no series is told by colour alone.
import { colors } from '../theme';

// Ember (failed, stopped) comes last so a version is not read as a failure.
export const seriesColors = [colors.moss, colors.slate, colors.heliodor, colors.ink, colors.amber, colors.inkFaint, colors.ember] as const;

/** A round top for the y axis: four sections with whole-number steps. */
export const niceMax = (max: number, sections = 4) => Math.max(sections, Math.ceil(max / sections) * sections);

export const seriesColor = (i: number) => seriesColors[i % seriesColors.length];
