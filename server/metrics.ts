// GET /metrics in the Prometheus text exposition format (prom-client), for an admin or a scraper's API
// token with the `metrics:read` scope. What it holds:
// - process metrics of Node (CPU, memory, event loop lag, handles, garbage collection);
// - heliodor_http_request_duration_seconds: every request's latency by method, route pattern and status;
// - heliodor_device_check_ins_total and heliodor_device_image_requests_total: the device conversation as
//   it was answered, counted by status code on the device routes (no device-API code is involved);
// - heliodor_db_pool_wait_seconds and the pool's connections: how long queries wait for a connection;
// - from the database at each scrape: offers made, install reports by state, trips, releases by state.
// The process-wide instruments live in `metrics` (named counters and histograms other modules may use).
import type { NextFunction, Request, RequestHandler, Response } from 'express';
import { collectDefaultMetrics, Counter, Gauge, Histogram, Registry } from 'prom-client';
import { QueryTypes, type Sequelize } from 'sequelize';
import type { Api } from './http/api';
import { INSTALL_STATES, RELEASE_STATES } from '../schemas/words';

const processRegistry = new Registry();
let processMetricsOn = false;

/** The process-wide instruments. */
export const metrics = {
  httpDuration: new Histogram({
    name: 'heliodor_http_request_duration_seconds',
    help: 'Time from a request arriving to its answer being sent, by method, route pattern and status code.',
    labelNames: ['method', 'route', 'status'] as const,
    buckets: [0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30],
    registers: [processRegistry],
  }),
  checkIns: new Counter({
    name: 'heliodor_device_check_ins_total',
    help: 'Check-ins answered, by status code: 200 answered, 400 refused body, 401 unknown token, 429 asked to slow down, 503 database away.',
    labelNames: ['status'] as const,
    registers: [processRegistry],
  }),
  imageRequests: new Counter({
    name: 'heliodor_device_image_requests_total',
    help: 'Image downloads answered, by status code (200 whole image, 206 a range, 304, 404, 416).',
    labelNames: ['status'] as const,
    registers: [processRegistry],
  }),
  poolWait: new Histogram({
    name: 'heliodor_db_pool_wait_seconds',
    help: 'Time a query waited for a connection from the database pool.',
    buckets: [0.0005, 0.001, 0.005, 0.01, 0.05, 0.1, 0.5, 1, 5, 10],
    registers: [processRegistry],
  }),
};

const CHECK_IN_ROUTE = '/api/device/v1/check-in';
const IMAGE_ROUTE = '/api/device/v1/images/:sha256';

/** The route pattern a request matched (never the raw path, which would make a label per logger or image). */
function routeOf(req: Request): string {
  if (req.route?.path && typeof req.route.path === 'string') return `${req.baseUrl ?? ''}${req.route.path}`;
  return req.originalUrl.startsWith('/api/') || req.originalUrl === '/api' ? 'unmatched' : 'web app';
}

/** Times every request and counts the device routes' answers; install before the routes. */
export function requestMetrics(): RequestHandler {
  return (req: Request, res: Response, next: NextFunction) => {
    const end = metrics.httpDuration.startTimer();
    res.on('finish', () => {
      const route = routeOf(req);
      const status = String(res.statusCode);
      end({ method: req.method, route, status });
      if (route === CHECK_IN_ROUTE && req.method === 'POST') metrics.checkIns.inc({ status });
      if (route === IMAGE_ROUTE && (req.method === 'GET' || req.method === 'HEAD')) metrics.imageRequests.inc({ status });
    });
    next();
  };
}

/** Times each wait for a pool connection (Sequelize's beforePoolAcquire / afterPoolAcquire hooks). */
export function measurePoolWaits(sequelize: Sequelize) {
  const started = new WeakMap<object, () => number>();
  sequelize.addHook('beforePoolAcquire', (options: object) => {
    if (options) started.set(options, metrics.poolWait.startTimer());
  });
  sequelize.addHook('afterPoolAcquire', (_connection: unknown, options: object) => {
    const stop = options ? started.get(options) : undefined;
    if (stop) {
      stop();
      started.delete(options);
    }
  });
}

type PoolLike = { size: number; available: number; using: number; waiting: number };

/** Gauges read from this app's database and pool at each scrape. */
function databaseRegistry(sequelize: Sequelize): Registry {
  const registry = new Registry();
  const count = async (sql: string) => {
    const [row] = await sequelize.query<{ n: number }>(sql, { type: QueryTypes.SELECT });
    return Number(row.n);
  };
  const grouped = async (sql: string) => sequelize.query<{ key: string; n: number }>(sql, { type: QueryTypes.SELECT });
  // A scrape while the database is away still answers: these figures are left out, database_up says 0.
  const quietly = async (work: () => Promise<void>, gauge: { reset(): void }) => {
    try {
      await work();
    } catch {
      gauge.reset();
    }
  };

  new Gauge({
    name: 'heliodor_database_up',
    help: '1 when the database answered this scrape, else 0.',
    registers: [registry],
    async collect() {
      this.set(await sequelize.query('SELECT 1').then(() => 1, () => 0));
    },
  });
  new Gauge({
    name: 'heliodor_db_pool_connections',
    help: 'Connections of the database pool: open, idle, in use, and queries waiting for one.',
    labelNames: ['state'] as const,
    registers: [registry],
    collect() {
      const p = (sequelize.connectionManager as unknown as { pool?: PoolLike }).pool;
      if (!p) return;
      this.set({ state: 'open' }, p.size);
      this.set({ state: 'idle' }, p.available);
      this.set({ state: 'in_use' }, p.using);
      this.set({ state: 'waiting' }, p.waiting);
    },
  });
  new Gauge({
    name: 'heliodor_offers',
    help: 'Offers made since the start of the fleet (one per logger and release), from the database.',
    registers: [registry],
    async collect() {
      await quietly(async () => this.set(await count('SELECT count(*) AS n FROM install_reports WHERE offered_at IS NOT NULL')), this);
    },
  });
  new Gauge({
    name: 'heliodor_install_reports',
    help: 'Installs by the state last reported (offered when nothing was reported yet), from the database.',
    labelNames: ['state'] as const,
    registers: [registry],
    async collect() {
      await quietly(async () => {
        const rows = await grouped('SELECT state AS key, count(*) AS n FROM install_reports GROUP BY state');
        for (const state of INSTALL_STATES) this.set({ state }, Number(rows.find((r) => r.key === state)?.n ?? 0));
      }, this);
    },
  });
  new Gauge({
    name: 'heliodor_trips',
    help: 'Releases stopped by the trip rule since the start, from the release histories.',
    registers: [registry],
    async collect() {
      await quietly(async () => this.set(await count(`SELECT count(*) AS n FROM release_transitions WHERE action = 'stop' AND actor_type = 'system'`)), this);
    },
  });
  new Gauge({
    name: 'heliodor_releases',
    help: 'Releases by state, from the database.',
    labelNames: ['state'] as const,
    registers: [registry],
    async collect() {
      await quietly(async () => {
        const rows = await grouped('SELECT state AS key, count(*) AS n FROM releases GROUP BY state');
        for (const state of RELEASE_STATES) this.set({ state }, Number(rows.find((r) => r.key === state)?.n ?? 0));
      }, this);
    },
  });
  return registry;
}

export function registerMetricsRoutes(api: Api, deps: { sequelize: Sequelize }) {
  if (!processMetricsOn) {
    collectDefaultMetrics({ register: processRegistry });
    processMetricsOn = true;
  }
  const fromDatabase = databaseRegistry(deps.sequelize);
  api.get('/metrics', async (_req, res) => {
    const all = Registry.merge([processRegistry, fromDatabase]);
    res.setHeader('Cache-Control', 'no-store');
    res.type(all.contentType).send(await all.metrics());
  });
}
