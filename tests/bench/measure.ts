// Timing one scenario: warm-up requests first (not counted), then N requests at a fixed concurrency,
// each timed from sending to the last byte of the answer. Any answer outside 2xx is an error: the run
// reports it and ends non-zero; timings never fail a run.

export type Request = { path: string; init?: RequestInit };

export type Measured = {
  /** Requests timed (warm-up excluded); fewer than asked when the time budget ran out. */
  n: number;
  p50: number;
  p95: number;
  mean: number;
  max: number;
  /** Bytes received over the timed requests. */
  bytes: number;
  /** Wall time of the timed part, ms. */
  wallMs: number;
  errors: string[];
};

export type MeasureOptions = {
  warmup: number;
  requests: number;
  concurrency: number;
  /** Stop timing after this many seconds once at least `minRequests` were timed (warm-up: a third of it). */
  budgetS: number;
  minRequests: number;
};

/** The q-th quantile by nearest rank (0 < q ≤ 1) of sorted values. */
export function quantile(sorted: number[], q: number): number {
  if (sorted.length === 0) return NaN;
  const rank = Math.max(1, Math.ceil(q * sorted.length));
  return sorted[Math.min(sorted.length, rank) - 1];
}

export async function measure(base: string, build: (i: number) => Request, options: MeasureOptions): Promise<Measured> {
  const errors: string[] = [];
  const one = async (i: number): Promise<{ ms: number; bytes: number }> => {
    const req = build(i);
    const started = performance.now();
    try {
      const res = await fetch(base + req.path, req.init);
      const body = await res.arrayBuffer();
      const ms = performance.now() - started;
      if (res.status < 200 || res.status > 299) {
        errors.push(`${req.init?.method ?? 'GET'} ${req.path} → ${res.status} ${Buffer.from(body).toString('utf8').slice(0, 300)}`);
      }
      return { ms, bytes: body.byteLength };
    } catch (err) {
      errors.push(`${req.init?.method ?? 'GET'} ${req.path} → ${err instanceof Error ? err.message : String(err)}`);
      return { ms: performance.now() - started, bytes: 0 };
    }
  };
  const run = async (count: number, offset: number, budgetMs: number, minCount: number, record: boolean) => {
    const times: number[] = [];
    let bytes = 0;
    let next = 0;
    let done = 0;
    const started = performance.now();
    const worker = async () => {
      for (;;) {
        const over = performance.now() - started > budgetMs && done >= minCount;
        if (next >= count || over) return;
        const i = next++;
        const r = await one(offset + i);
        done++;
        if (record) {
          times.push(r.ms);
          bytes += r.bytes;
        }
      }
    };
    await Promise.all(Array.from({ length: Math.max(1, options.concurrency) }, worker));
    return { times, bytes, wallMs: performance.now() - started };
  };
  // Warm-up gets a third of the time budget (at least one request), so a slow scenario does not spend minutes warming.
  await run(options.warmup, 0, (options.budgetS * 1000) / 3, Math.min(1, options.warmup), false);
  const { times, bytes, wallMs } = await run(options.requests, options.warmup, options.budgetS * 1000, options.minRequests, true);
  const sorted = [...times].sort((a, b) => a - b);
  return {
    n: sorted.length,
    p50: quantile(sorted, 0.5),
    p95: quantile(sorted, 0.95),
    mean: sorted.reduce((s, x) => s + x, 0) / Math.max(1, sorted.length),
    max: sorted[sorted.length - 1] ?? NaN,
    bytes,
    wallMs,
    errors,
  };
}
