// Heliodor's own line icons (24×24 grid, 1.8 px stroke), drawn with react-native-svg.
import React from 'react';
import Svg, { Circle, Line, Path, Rect } from 'react-native-svg';

export type IconName = 'overview' | 'loggers' | 'sites' | 'releases' | 'enroll' | 'more' | 'activity' | 'mail' | 'keys' | 'settings' | 'lagging' | 'models' | 'team' | 'account' | 'signout';

export function Icon({ name, color, size = 22 }: { name: IconName; color: string; size?: number }) {
  const p = { stroke: color, strokeWidth: 1.8, fill: 'none', strokeLinecap: 'round' as const, strokeLinejoin: 'round' as const };
  return (
    <Svg width={size} height={size} viewBox="0 0 24 24" aria-hidden>
      {name === 'overview' && (
        <>
          <Circle cx="12" cy="12" r="4" {...p} />
          <Line x1="12" y1="2.5" x2="12" y2="5" {...p} />
          <Line x1="12" y1="19" x2="12" y2="21.5" {...p} />
          <Line x1="2.5" y1="12" x2="5" y2="12" {...p} />
          <Line x1="19" y1="12" x2="21.5" y2="12" {...p} />
          <Line x1="5.3" y1="5.3" x2="7" y2="7" {...p} />
          <Line x1="17" y1="17" x2="18.7" y2="18.7" {...p} />
          <Line x1="5.3" y1="18.7" x2="7" y2="17" {...p} />
          <Line x1="17" y1="7" x2="18.7" y2="5.3" {...p} />
        </>
      )}
      {name === 'loggers' && (
        <>
          <Rect x="5" y="5" width="14" height="14" rx="2" {...p} />
          <Path d="M9 2.5v2.5M15 2.5v2.5M9 19v2.5M15 19v2.5M2.5 9h2.5M2.5 15h2.5M19 9h2.5M19 15h2.5" {...p} />
          <Path d="M9 14l2-4 2 3 2-3" {...p} />
        </>
      )}
      {name === 'sites' && (
        <>
          <Path d="M12 21s-6.5-6.1-6.5-11A6.5 6.5 0 0 1 18.5 10c0 4.9-6.5 11-6.5 11z" {...p} />
          <Circle cx="12" cy="10" r="2.3" {...p} />
        </>
      )}
      {name === 'releases' && (
        <>
          <Path d="M12 3v12M7.5 7.5L12 3l4.5 4.5" {...p} />
          <Path d="M4 14v5a2 2 0 0 0 2 2h12a2 2 0 0 0 2-2v-5" {...p} />
        </>
      )}
      {name === 'enroll' && (
        <>
          <Rect x="3.5" y="3.5" width="6" height="6" rx="1" {...p} />
          <Rect x="14.5" y="3.5" width="6" height="6" rx="1" {...p} />
          <Rect x="3.5" y="14.5" width="6" height="6" rx="1" {...p} />
          <Path d="M14.5 14.5h2.5v2.5M20.5 14.5v6h-6v-2.5" {...p} />
        </>
      )}
      {name === 'more' && (
        <>
          <Circle cx="5.5" cy="12" r="1.4" {...p} />
          <Circle cx="12" cy="12" r="1.4" {...p} />
          <Circle cx="18.5" cy="12" r="1.4" {...p} />
        </>
      )}
      {name === 'activity' && <Path d="M3 12h4l3-7 4 14 3-7h4" {...p} />}
      {name === 'mail' && (
        <>
          <Rect x="3" y="5.5" width="18" height="13" rx="2" {...p} />
          <Path d="M3.5 6.5l8.5 6.5 8.5-6.5" {...p} />
        </>
      )}
      {name === 'keys' && (
        <>
          <Circle cx="8" cy="15" r="4" {...p} />
          <Path d="M11 12l8-8M16 7l2.5 2.5M14 9l2 2" {...p} />
        </>
      )}
      {name === 'settings' && (
        <>
          <Circle cx="12" cy="12" r="3" {...p} />
          <Path d="M12 2.5v3M12 18.5v3M2.5 12h3M18.5 12h3M5.3 5.3l2.1 2.1M16.6 16.6l2.1 2.1M5.3 18.7l2.1-2.1M16.6 7.4l2.1-2.1" {...p} />
        </>
      )}
      {name === 'lagging' && (
        <>
          <Circle cx="12" cy="12" r="8.5" {...p} />
          <Path d="M12 7v5l3.5 2" {...p} />
        </>
      )}
      {name === 'models' && (
        <>
          <Rect x="3.5" y="7" width="17" height="10" rx="2" {...p} />
          <Path d="M7 7V4.5M12 7V4.5M17 7V4.5M7 12h4" {...p} />
        </>
      )}
      {name === 'team' && (
        <>
          <Circle cx="9" cy="8.5" r="3" {...p} />
          <Path d="M3.5 19c.8-3.3 3-5 5.5-5s4.7 1.7 5.5 5" {...p} />
          <Circle cx="17" cy="9.5" r="2.3" {...p} />
          <Path d="M16 14.3c2.3.1 3.8 1.7 4.5 4.2" {...p} />
        </>
      )}
      {name === 'account' && (
        <>
          <Circle cx="12" cy="8.5" r="3.5" {...p} />
          <Path d="M5 20c1-3.8 3.8-6 7-6s6 2.2 7 6" {...p} />
        </>
      )}
      {name === 'signout' && (
        <>
          <Path d="M14 4h4a2 2 0 0 1 2 2v12a2 2 0 0 1-2 2h-4" {...p} />
          <Path d="M10 16l-4-4 4-4M6 12h9" {...p} />
        </>
      )}
    </Svg>
  );
}
