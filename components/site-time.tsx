// A time that belongs to a site, shown in the site's own time zone with the zone's abbreviation
// ("2026-03-29 06:42 BST"); wide screens add the same instant in UTC beside it. The wording comes from
// lib/site-time.ts, the one formatter of site times.
import React from 'react';
import { Text, type StyleProp, type TextStyle } from 'react-native';
import { siteDateTime, utcDateTime } from '../lib/site-time';
import { useBreakpoints } from './breakpoints';
import { colors } from './theme';

/** The words for a site time: wide adds "(… UTC)". For places that need text, not an element. */
export function siteTimeWords(at: string, timeZone: string, wide: boolean): string {
  return wide ? `${siteDateTime(at, timeZone)} (${utcDateTime(at)})` : siteDateTime(at, timeZone);
}

export function SiteTime({ at, timeZone, style, testID }: { at: string; timeZone: string; style?: StyleProp<TextStyle>; testID?: string }) {
  const { wide } = useBreakpoints();
  const local = siteDateTime(at, timeZone);
  const utc = utcDateTime(at);
  return (
    <Text style={style} aria-label={`${local} (${utc})`} testID={testID}>
      {local}
      {wide ? <Text style={{ color: colors.inkSoft }}>{` · ${utc}`}</Text> : null}
    </Text>
  );
}
