// Seeded randomness for the fleet simulator, so a run (and every test) can be repeated exactly.
// Pure: no I/O.

/** A source of numbers in [0, 1), like Math.random. */
export type Random = () => number;

/**
 * Mulberry32: a small 32-bit generator with a full 2^32 period, good enough for simulated weather and
 * faults (not for anything secret). The seed is any 32-bit integer.
 */
export function seededRandom(seed: number): Random {
  let state = seed >>> 0;
  return () => {
    state = (state + 0x6d2b79f5) >>> 0;
    let t = state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** A child generator: each logger gets its own stream, so adding one logger does not change the others. */
export function forkRandom(random: Random): Random {
  return seededRandom(Math.floor(random() * 4294967296));
}

/** A normally distributed sample (Box–Muller). */
export function gaussian(random: Random, mean = 0, sd = 1): number {
  const u = Math.max(random(), Number.EPSILON);
  const v = random();
  return mean + sd * Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
}

/** True with probability p. */
export function chance(random: Random, p: number): boolean {
  return random() < p;
}

/** One element of a non-empty list. */
export function pick<T>(random: Random, items: readonly T[]): T {
  return items[Math.min(items.length - 1, Math.floor(random() * items.length))];
}

/** How many events of a Poisson process with the given rate happen in `duration` (same time unit). */
export function poisson(random: Random, rate: number, duration: number): number {
  const mean = rate * duration;
  if (mean <= 0) return 0;
  // Knuth's method; the means here are far below 1, so it ends after a step or two.
  const limit = Math.exp(-mean);
  let count = 0;
  let product = random();
  while (product > limit && count < 1000) {
    count += 1;
    product *= random();
  }
  return count;
}
