// The goals each ratio is read against, printed beside it; a miss is marked, never a failure (timing
// never fails a run). Console views are ratios of their p50 (and the fleet table's p95) to the same-run
// baseline; the CSV export is judged by throughput and memory growth; the scale runs by their own ratios.
import type { ScenarioResult } from './report';

export type Verdict = { goal: string; met: boolean };

/** The goal of one scenario's ratio to the baseline, or null when it has none. */
export function scenarioGoal(s: ScenarioResult, baselineP95: number, all: ScenarioResult[]): Verdict[] {
  const out: Verdict[] = [];
  if (s.group === 'fleet table') {
    out.push({ goal: 'p50 ≤ 4×', met: s.ratio <= 4 });
    out.push({ goal: 'p95 ≤ 8×', met: s.p95 / baselineP95 <= 8 });
    const page1 = s.name.endsWith(' keyset page 21') ? all.find((x) => x.name === s.name.replace(' keyset page 21', ' page 1')) : undefined;
    if (page1) out.push({ goal: `page 21 ≤ 1.3× page 1 (${(s.p50 / page1.p50).toFixed(2)}×)`, met: s.p50 <= 1.3 * page1.p50 });
  } else if (s.group === 'fleet views') {
    out.push({ goal: 'p50 ≤ 6×', met: s.ratio <= 6 });
  } else if (s.group === 'device API') {
    out.push({ goal: 'p50 ≤ 3×', met: s.ratio <= 3 });
  } else if (s.group === 'export') {
    if (s.mbPerS !== undefined) out.push({ goal: '≥ 20 MB/s', met: s.mbPerS >= 20 });
    if (s.rssGrowthMb !== undefined) out.push({ goal: `RSS growth < 60 MB (${s.rssGrowthMb.toFixed(0)} MB)`, met: s.rssGrowthMb < 60 });
  }
  return out;
}

/** "goal ✓" or "goal ✗ MISS" for the table. */
export function verdictText(verdicts: Verdict[]): string {
  return verdicts.map((v) => `${v.goal} ${v.met ? '✓' : '✗ MISS'}`).join('; ');
}
