// Load manners: how a busy server keeps a fleet of loggers from piling up on it.
//
// - next_check_in_s: the model's interval with ±10 % uniform jitter (randomness injected), so loggers
//   that booted together drift apart, multiplied by a stretch factor when the server is busy.
// - Busy measure: the larger of (a) the event-loop delay — mean over the last few seconds from
//   perf_hooks.monitorEventLoopDelay, 0 at 20 ms and full at 220 ms — (b) the database pool queue —
//   requests waiting for a connection ÷ pool size — and (c) check-ins in flight ÷ the in-flight cap.
//   The stretch is 1 + 3 × busy, so at most four times the interval. All three are cheap to read at
//   every check-in.
// - Overload: more check-ins in flight than the cap (HELIODOR_DEVICE_MAX_IN_FLIGHT, default 200 per
//   process) → 503 with Retry-After at once, rather than queueing until a timeout. The cap guards this
//   process's event loop and database pool, so it is per process by design: N processes take N × the cap.
// - Rate limit: per logger, `deviceRatePerMinute` check-ins a minute (HELIODOR_DEVICE_RATE, default 60)
//   → 429 with Retry-After until the window ends. It must hold however many processes serve the fleet,
//   so it is counted in PostgreSQL by the check-in's own statement (checkin-store.ts recordVisit).
import { monitorEventLoopDelay, type IntervalHistogram } from 'node:perf_hooks';
import type { NextFunction, Request, RequestHandler, Response } from 'express';
import type { Sequelize } from 'sequelize';
import { problems } from '../http/problem';

export const JITTER = 0.1;
export const MAX_STRETCH = 4;

/** Seconds until the next check-in: interval × (1 ± 10 %) × stretch, at least 1. `random` in [0, 1). */
export function nextCheckInSeconds(intervalS: number, random: number, stretch = 1): number {
  const jitter = 1 + JITTER * (2 * random - 1);
  return Math.max(1, Math.round(intervalS * jitter * Math.min(Math.max(stretch, 1), MAX_STRETCH)));
}

export type BusySignals = { eventLoopDelayMs: number; poolWaiting: number; poolMax: number; inFlight: number; maxInFlight: number };

/** 0 (idle) … 1 (saturated) from the three signals. */
export function busyness(s: BusySignals): number {
  const loop = (s.eventLoopDelayMs - 20) / 200;
  const pool = s.poolMax > 0 ? s.poolWaiting / s.poolMax : 0;
  const flight = s.maxInFlight > 0 ? s.inFlight / s.maxInFlight : 0;
  return Math.min(1, Math.max(0, loop, pool, flight));
}

export function stretchFor(busy: number): number {
  return 1 + (MAX_STRETCH - 1) * Math.min(1, Math.max(0, busy));
}

export type LoadControl = {
  /** Middleware: refuses with 503 when too many check-ins are in flight, else counts this one. */
  admit: RequestHandler;
  /** The stretch factor now. */
  stretch(): number;
  signals(): BusySignals;
  stop(): void;
};

export function maxInFlightSetting(env: NodeJS.ProcessEnv = process.env): number {
  const n = Number(env.HELIODOR_DEVICE_MAX_IN_FLIGHT ?? '');
  return Number.isInteger(n) && n >= 1 ? n : 200;
}

export function createLoadControl(sequelize: Sequelize, options: { maxInFlight?: number; retryAfterS?: number } = {}): LoadControl {
  const maxInFlight = options.maxInFlight ?? maxInFlightSetting();
  const retryAfterS = options.retryAfterS ?? 30;
  let inFlight = 0;
  let histogram: IntervalHistogram | null = monitorEventLoopDelay({ resolution: 20 });
  histogram.enable();
  let recentDelayMs = 0;
  const sampler = setInterval(() => {
    if (!histogram) return;
    recentDelayMs = histogram.count > 0 ? histogram.mean / 1e6 : 0;
    histogram.reset();
  }, 5_000);
  sampler.unref?.();

  const pool = () => {
    const p = (sequelize as unknown as { connectionManager?: { pool?: { waiting?: number; maxSize?: number } } }).connectionManager?.pool;
    return { waiting: Number(p?.waiting ?? 0), max: Number(p?.maxSize ?? (sequelize.config as { pool?: { max?: number } }).pool?.max ?? 0) };
  };
  const signals = (): BusySignals => {
    const p = pool();
    return { eventLoopDelayMs: recentDelayMs, poolWaiting: p.waiting, poolMax: p.max, inFlight, maxInFlight };
  };

  return {
    admit(_req: Request, res: Response, next: NextFunction) {
      if (inFlight >= maxInFlight) {
        return next(problems.unavailable('The server is busy; check in again after the Retry-After delay.', retryAfterS));
      }
      inFlight++;
      let done = false;
      const release = () => {
        if (!done) {
          done = true;
          inFlight--;
        }
      };
      res.on('finish', release);
      res.on('close', release);
      next();
    },
    stretch: () => stretchFor(busyness(signals())),
    signals,
    stop() {
      clearInterval(sampler);
      histogram?.disable();
      histogram = null;
    },
  };
}
