// The device API routes (DEVICE_API.md): HTTP only — authenticate the logger, parse, call the service.
import type { Request, Response } from 'express';
import type { Sequelize } from 'sequelize';
import type pino from 'pino';
import { declareAccess, rules } from '../auth/access';
import type { Api } from '../http/api';
import { parse } from '../http/validate';
import { problems } from '../http/problem';
import type { Mailer } from '../mail/mailer';
import { checkInRequestSchema } from '../../schemas/device';
import { authenticateLogger } from './auth';
import { checkIn } from './checkin';
import { isImageId, serveImage } from './images';
import { createLoadControl, type LoadControl } from './load';
import type { ImageStore } from '../images/store';
import { deviceOpenApiDocument } from './openapi';
import { startPartitionMaintenance } from './partitions';
import { createReleaseCache, type ReleaseCache } from './release-cache';

export const CHECK_IN_PATH = '/api/device/v1/check-in';
export const IMAGE_PATH = '/api/device/v1/images/:sha256';
export const OPENAPI_PATH = '/api/device/v1/openapi.json';

declareAccess({
  [`POST ${CHECK_IN_PATH}`]: rules.device,
  [`GET ${IMAGE_PATH}`]: rules.device,
  [`GET ${OPENAPI_PATH}`]: rules.public,
});

export type DeviceApiDeps = {
  sequelize: Sequelize;
  mailer: Mailer;
  logger: pino.Logger;
  now: () => Date;
  config: { deviceRatePerMinute: number };
  /** The image store: offers name its presigned URL when it has them, else this server's download path. */
  images: ImageStore;
  /** Randomness for the check-in jitter; tests inject it. */
  random?: () => number;
};

/**
 * The device API as the app holds it: `routes` registers its routes, `stop` ends its background work
 * (the release cache's LISTEN connection, partition maintenance, the load sampler), which starts when
 * the device API is created. The app stops it before it closes the database.
 */
export type DeviceApi = { routes(api: Api): void; stop(): Promise<void>; releases: ReleaseCache };

export function createDeviceApi(deps: DeviceApiDeps): DeviceApi {
  const { sequelize } = deps;
  const releases = createReleaseCache(sequelize, { log: (msg, err) => deps.logger.warn({ err }, msg) });
  const load = createLoadControl(sequelize);
  const stopPartitions = startPartitionMaintenance(sequelize, {
    now: deps.now,
    log: (err) => deps.logger.warn({ err }, 'check-in partition maintenance failed; retrying later'),
  });
  let stopped: Promise<void> | null = null;
  const stop = () =>
    (stopped ??= (async () => {
      stopPartitions();
      load.stop();
      await releases.stop();
    })());

  return { routes: (api) => registerRoutes(api, deps, releases, load), stop, releases };
}

function registerRoutes(api: Api, deps: DeviceApiDeps, releases: ReleaseCache, load: LoadControl) {
  const { sequelize } = deps;
  // Evaluations of the reset-rate rule, at most one a minute per release in this process: a throttle on
  // work, not a limit the fleet relies on, so it is kept in memory.
  const resetChecks = new Map<string, number>();
  const driftChecks = new Map<string, number>();
  const { images } = deps;
  const imageUrl = images.presignedUrl ? (sha256: string) => images.presignedUrl!(sha256) : (sha256: string) => IMAGE_PATH.replace(':sha256', sha256);

  api.post(CHECK_IN_PATH, load.admit, async (req: Request, res: Response) => {
    const logger = await authenticateLogger(sequelize, req);
    const body = parse(checkInRequestSchema, req.body);
    const reply = await checkIn(
      {
        sequelize, releases, mailer: deps.mailer, logger: deps.logger, now: deps.now, random: deps.random ?? Math.random, stretch: load.stretch, resetChecks, driftChecks,
        ratePerMinute: deps.config.deviceRatePerMinute, imageUrl,
      },
      logger,
      body,
      { ip: req.ip ?? null, requestId: typeof req.id === 'string' ? req.id : null },
    );
    res.setHeader('Cache-Control', 'no-store');
    res.json(reply);
  });

  api.get(IMAGE_PATH, async (req: Request, res: Response) => {
    const logger = await authenticateLogger(sequelize, req);
    const sha256 = req.params.sha256;
    if (!isImageId(sha256)) throw problems.notFound('image', 'No such image for this logger.');
    await serveImage(req, res, { sequelize, store: images, loggerId: logger.id, sha256 });
  });

  api.get(OPENAPI_PATH, (_req: Request, res: Response) => {
    res.setHeader('Cache-Control', 'public, max-age=300');
    res.json(deviceOpenApiDocument());
  });
}
