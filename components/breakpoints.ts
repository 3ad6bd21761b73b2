import { useWindowDimensions } from 'react-native';

// One breakpoint module: phone styles are the default; wide screens add a sidebar and columns.
export const BREAKPOINTS = { wide: 900, contentMax: 1280 } as const;

export function getBreakpoints(width: number) {
  return { wide: width >= BREAKPOINTS.wide, width };
}

export function useBreakpoints() {
  const { width } = useWindowDimensions();
  return getBreakpoints(width);
}
