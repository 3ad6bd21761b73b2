// What a run prints and keeps: a table (scenario, p50, p95, ratio to the baseline), a JSON file of the
// whole run, and the ratio changes against an earlier run's JSON.
import fs from 'node:fs';
import path from 'node:path';

export type ScenarioResult = {
  name: string;
  group: string;
  n: number;
  concurrency: number;
  p50: number;
  p95: number;
  mean: number;
  max: number;
  /** p50 / baseline p50 of the same run. */
  ratio: number;
  errors: number;
  /** Extra figures (rows matched, MB/s …). */
  note?: string;
  mbPerS?: number;
  /** Resident memory growth of the process over the scenario, MB (the CSV export). */
  rssGrowthMb?: number;
  /** The goals read against this scenario's figures (tests/bench/goals.ts), with a mark for each. */
  goals?: string;
  missed?: boolean;
};

/** The scale runs: the decision alone, several processes, and the check-in at this fleet size. */
export type ScaleResult = { name: string; figure: string; goal?: string; met?: boolean };

export type ExplainResult = { scenario: string; p50: number; sql: string; keyLines: string[]; plan: string };

export type BenchRun = {
  startedAt: string;
  node: string;
  loggers: number;
  sites: number;
  checkIns: number;
  installReports: number;
  seedSeconds: number;
  seedSteps: Record<string, number>;
  options: Record<string, unknown>;
  /** p50: the median of the baseline's p50s measured through the run (p50s); p95: at the start. */
  baseline: { name: string; p50: number; p95: number; p50s: number[] };
  scenarios: ScenarioResult[];
  explain: ExplainResult[];
  scale?: ScaleResult[];
  errors: string[];
};

const fmt = (ms: number) => (Number.isFinite(ms) ? (ms < 10 ? ms.toFixed(2) : ms < 100 ? ms.toFixed(1) : ms.toFixed(0)) : '—');

export function table(run: BenchRun): string {
  const rows = run.scenarios.map((s) => [s.name, String(s.n), fmt(s.p50), fmt(s.p95), `${s.ratio.toFixed(1)}×`, s.errors ? String(s.errors) : '', s.goals ?? '', s.note ?? '']);
  const head = ['scenario', 'n', 'p50 ms', 'p95 ms', 'ratio', 'errors', 'goal', 'note'];
  const widths = head.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i].length)));
  const line = (cells: string[]) => cells.map((c, i) => (i >= 1 && i <= 5 ? c.padStart(widths[i]) : c.padEnd(widths[i]))).join('  ').trimEnd();
  return [
    `Baseline ${run.baseline.name}: p50 ${fmt(run.baseline.p50)} ms (median of ${run.baseline.p50s.length} measurements through the run, ` +
      `${fmt(Math.min(...run.baseline.p50s))}–${fmt(Math.max(...run.baseline.p50s))} ms), p95 ${fmt(run.baseline.p95)} ms at the start`,
    '',
    line(head),
    line(widths.map((w) => '─'.repeat(w))),
    ...rows.map(line),
    ...(run.scale?.length
      ? ['', 'Scale:', ...run.scale.map((x) => `  ${x.name}: ${x.figure}${x.goal ? `  (goal ${x.goal}${x.met === undefined ? '' : x.met ? ' ✓' : ' ✗ MISS'})` : ''}`)]
      : []),
  ].join('\n');
}

export function writeRun(run: BenchRun, file: string) {
  fs.mkdirSync(path.dirname(file), { recursive: true });
  fs.writeFileSync(file, JSON.stringify(run, null, 2) + '\n');
}

export function readRun(file: string): BenchRun {
  return JSON.parse(fs.readFileSync(file, 'utf8')) as BenchRun;
}

/** Ratio changes per scenario (new ÷ old ratio − 1); ratios rather than milliseconds, so two machines compare. */
export function compare(before: BenchRun, after: BenchRun): string {
  const old = new Map(before.scenarios.map((s) => [s.name, s]));
  const rows: string[][] = [];
  for (const s of after.scenarios) {
    const o = old.get(s.name);
    if (!o) {
      rows.push([s.name, '—', `${s.ratio.toFixed(1)}×`, 'new']);
      continue;
    }
    const change = s.ratio / o.ratio - 1;
    const mark = change > 0.25 ? '  slower' : change < -0.2 ? '  faster' : '';
    rows.push([s.name, `${o.ratio.toFixed(1)}×`, `${s.ratio.toFixed(1)}×`, `${change >= 0 ? '+' : ''}${(change * 100).toFixed(0)} %${mark}`]);
  }
  for (const o of before.scenarios) if (!after.scenarios.some((s) => s.name === o.name)) rows.push([o.name, `${o.ratio.toFixed(1)}×`, '—', 'gone']);
  const head = ['scenario', 'before', 'after', 'change'];
  const widths = head.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i].length)));
  const line = (cells: string[]) => cells.map((c, i) => (i === 0 ? c.padEnd(widths[i]) : c.padStart(widths[i]))).join('  ').trimEnd();
  // Two fleet sizes: the check-in's ratio at the larger against the smaller (goal ≤ 1.3× from 10 000 to 1 000 000).
  const scaleLines: string[] = [];
  if (before.loggers !== after.loggers) {
    const [small, large] = before.loggers < after.loggers ? [before, after] : [after, before];
    for (const name of ['device check-in', 'device check-in with reports']) {
      const a = small.scenarios.find((x) => x.name === name);
      const b = large.scenarios.find((x) => x.name === name);
      if (!a || !b) continue;
      const r = b.ratio / a.ratio;
      scaleLines.push(`${name} at ${large.loggers} loggers ÷ at ${small.loggers}: ${r.toFixed(2)}× (ratios to each run's baseline; p50 ${fmt(b.p50)} ms vs ${fmt(a.p50)} ms)  goal ≤ 1.3× ${r <= 1.3 ? '✓' : '✗ MISS'}`);
    }
  }
  return [
    ...scaleLines,
    ...(scaleLines.length ? [''] : []),
    `Ratio changes: ${before.startedAt} (${before.loggers} loggers) → ${after.startedAt} (${after.loggers} loggers)`,
    '',
    line(head),
    line(widths.map((w) => '─'.repeat(w))),
    ...rows.map(line),
  ].join('\n');
}
