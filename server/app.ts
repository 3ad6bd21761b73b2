// Builds the Express app (no listening here, so tests run it in-process with supertest).
import crypto from 'node:crypto';
import express, { type Request, type Response, type NextFunction } from 'express';
import helmet from 'helmet';
import cookieParser from 'cookie-parser';
import pinoHttp from 'pino-http';
import pino, { type Logger as Pino } from 'pino';
import type { Sequelize } from 'sequelize';
import type { Config } from './config';
import type { Mailer } from './mail/mailer';
import { requestLogLevel, requestSerializers } from './logging';
import { authenticate } from './auth/middleware';
import { createLater } from './auth/later';
import { bcryptCost } from './auth/passwords';
import { createApi } from './http/api';
import { errorHandler } from './http/errors';
import { problems } from './http/problem';
import { registerAuthRoutes } from './auth/routes';
import { registerHealthRoutes, type Readiness } from './health/routes';
import { registerMailRoutes } from './mail/routes';
import { registerOverviewRoutes } from './overview/routes';
import { registerActivityRoutes } from './activity/routes';
import { registerTeamRoutes } from './team/routes';
import { registerReleaseRoutes } from './releases/routes';
import { registerKeyRoutes } from './keys/routes';
import { registerTokenRoutes } from './tokens/routes';
import { registerModelRoutes } from './models/routes';
import { registerSiteRoutes } from './sites/routes';
import { registerLoggerRoutes } from './loggers/routes';
import { registerFleetRoutes } from './fleet/routes';
import { apiCompression, webApp } from './http/web';
import { createDeviceApi } from './device-api/routes';
import { LocalImageStore, type ImageStore } from './images/store';
import { measurePoolWaits, registerMetricsRoutes, requestMetrics } from './metrics';
import { createSummaries, type Summaries } from './fleet/summaries';

export type AppDeps = {
  config: Pick<Config, 'jwtSecret' | 'dataKey' | 'demo' | 'devMailbox' | 'outboxDir' | 'storeDir' | 'webDir' | 'publicUrl' | 'imageLimitBytes' | 'deviceRatePerMinute' | 'production'>;
  sequelize: Sequelize;
  mailer: Mailer;
  readiness: Readiness;
  /** The clock; tests inject a fixed one. */
  now?: () => Date;
  logger?: Pino;
  /** Where release images live (server/images/select.ts); the local folder config.storeDir when absent. */
  images?: ImageStore;
};

export type AppServices = Required<Omit<AppDeps, 'readiness'>> & { readiness: Readiness; summaries: Summaries };

export function createApp(deps: AppDeps) {
  const now = deps.now ?? (() => new Date());
  const logger = deps.logger ?? pino({ level: 'silent' });
  const images = deps.images ?? new LocalImageStore(deps.config.storeDir);
  // The fleet summaries' worker (server/fleet/summaries.ts): runs from here until the app is stopped.
  const summaries = createSummaries({ sequelize: deps.sequelize, now, logger });
  summaries.start();
  const services: AppServices = { ...deps, now, logger, images, summaries };
  const app = express();
  app.disable('x-powered-by');
  app.set('trust proxy', 'loopback');

  app.use(
    pinoHttp({
      logger: services.logger,
      genReqId: (req, res) => {
        const id = crypto.randomUUID();
        res.setHeader('X-Request-Id', id);
        return id;
      },
      // Never log credentials: cookies, bearer tokens, a label link's token in the URL (server/logging.ts).
      serializers: requestSerializers,
      autoLogging: { ignore: (req) => req.url === '/api/health' || req.url === '/api/health/live' || req.url === '/api/health/ready' },
      // Requests at debug outside production: the living demo checks in every second or so.
      customLogLevel: requestLogLevel(services.config.production),
    }),
  );
  app.use(requestMetrics());
  measurePoolWaits(services.sequelize);
  app.use(
    helmet({
      contentSecurityPolicy: {
        directives: {
          'default-src': ["'self'"],
          'script-src': ["'self'", "'wasm-unsafe-eval'"],
          'style-src': ["'self'", "'unsafe-inline'"],
          'img-src': ["'self'", 'data:', 'blob:'],
          'font-src': ["'self'", 'data:'],
          'media-src': ["'self'", 'blob:', 'mediastream:'],
          'connect-src': ["'self'"],
          'worker-src': ["'self'", 'blob:'],
          'upgrade-insecure-requests': null,
        },
      },
      crossOriginEmbedderPolicy: false,
      strictTransportSecurity: services.config.production,
    }),
  );
  app.use(cookieParser());
  app.use('/api', apiCompression());
  // Device API bodies are limited to 16 KiB; the console API to 1 MiB (uploads use multipart).
  app.use('/api/device', express.json({ limit: '16kb', type: ['application/json', 'application/*+json'] }));
  app.use('/api', express.json({ limit: '1mb' }));
  app.use('/api', authenticate({ jwtSecret: services.config.jwtSecret, production: services.config.production, sequelize: services.sequelize, now: services.now }));
  app.use('/metrics', authenticate({ jwtSecret: services.config.jwtSecret, production: services.config.production, sequelize: services.sequelize, now: services.now }));

  const router = express.Router();
  const api = createApi(router);
  registerHealthRoutes(api, services);
  registerMetricsRoutes(api, services);
  // Accounts and the team share one set of dependencies; `later` runs work after an answer (reset e-mails).
  const later = createLater(services.logger);
  const accounts = {
    sequelize: services.sequelize,
    config: services.config,
    mailer: services.mailer,
    logger: services.logger,
    now: services.now,
    later,
    passwordCost: bcryptCost(services.config.production),
  };
  registerAuthRoutes(api, accounts);
  registerMailRoutes(api, services.config);
  registerOverviewRoutes(api, services);
  registerActivityRoutes(api, services);
  registerTeamRoutes(api, accounts);
  registerReleaseRoutes(api, services, services.images);
  registerKeyRoutes(api, services);
  registerTokenRoutes(api, services);
  registerModelRoutes(api, services);
  registerSiteRoutes(api, services);
  registerFleetRoutes(api, services); // before the logger routes: /api/loggers/export.csv is not a logger id
  registerLoggerRoutes(api, services);
  // The device API's background work runs from here until the app is stopped.
  const deviceApi = createDeviceApi(services);
  deviceApi.routes(api);
  app.use(router);

  app.use('/api', (req: Request, _res: Response, next: NextFunction) => next(problems.notFound('endpoint', `No endpoint ${req.method} ${req.path}.`)));

  // The exported web app (precompressed, cached by file kind), client-side routes falling back to index.html.
  app.use(webApp(services.config.webDir));

  app.use(errorHandler);
  /** Ends the app's background work; call it before closing the database. */
  const stop = async () => {
    await Promise.all([deviceApi.stop(), summaries.stop()]);
  };
  return Object.assign(app, { apiRouter: router, services, stop, later });
}
