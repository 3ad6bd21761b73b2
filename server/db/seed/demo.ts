// Seeds the demo scenario into a new database, all in one transaction (nothing half-seeded: /api/health
// waits for it). Logger tokens are derived from the data folder's demo secret (server/demo/tokens.ts)
// and stored as SHA-256 like any others, so the living demo can check in as those loggers; their bench
// sheet is written to the data folder (demo mode only) for the fleet simulator.
//
// Two sizes: 'full' is PRODUCT.md's scenario at full size (about 240 loggers at 60 sites, signed
// releases, 14 days of check-ins; see full-scenario.ts), what `npm start` seeds; 'small' is the six
// sites and 14 loggers most API and browser tests build on (no releases, no history).
import fs from 'node:fs';
import path from 'node:path';
import type { Sequelize } from 'sequelize';
import { Activity, Logger, LoggerModel, Site, SiteIntegrator, User } from '../models';
import { hashPassword } from '../../auth/passwords';
import { demoTokenIssuer } from '../../demo/tokens';
import { demoEmail, demoModel, demoPeople, demoSites } from './scenario';
import { seedFullScenario } from './full-scenario';
import { proposeTrustSets } from '../../keys/trust-sets';

export async function databaseIsNew(sequelize: Sequelize): Promise<boolean> {
  return (await User.count()) === 0 && (await LoggerModel.count()) === 0;
}

export type SeedSize = 'full' | 'small';

export type SeedOptions = {
  password: string;
  dataDir: string;
  now: Date;
  bcryptCost: number;
  /** Default 'small'. */
  size?: SeedSize;
  /** The firmware store (where 'full' puts its images); required for 'full'. */
  storeDir?: string;
};

export async function seedDemo(sequelize: Sequelize, options: SeedOptions): Promise<void> {
  const { now } = options;
  const passwordHash = await hashPassword(options.password, options.bcryptCost);
  const bench: string[] = ['serial,token,model,board'];
  const size = options.size ?? 'small';
  if (size === 'full' && !options.storeDir) throw new Error('the full demo seed needs the firmware store directory');
  const tokenFor = demoTokenIssuer(options.dataDir);
  await sequelize.transaction(async (transaction) => {
    const people = new Map<string, User>();
    for (const p of demoPeople) {
      people.set(p.name, await User.create({ email: demoEmail(p.name), name: p.name, role: p.role, passwordHash }, { transaction }));
    }
    const model = await LoggerModel.create(demoModel, { transaction });
    if (size === 'full') {
      await seedFullScenario({ sequelize, transaction, now, people, model, dataDir: options.dataDir, storeDir: options.storeDir!, bench, tokenFor });
      // Version 1 of the model's trust set: the demo key, as the demo loggers were made with it.
      await proposeTrustSets(sequelize, transaction, now);
      return;
    }
    let serialNo = 1;
    for (const [i, s] of demoSites.entries()) {
      const integrator = people.get(s.integrator)!;
      const site = await Site.create(
        { name: s.name, customer: s.customer, address: s.address, latitude: s.latitude, longitude: s.longitude, timeZone: 'Europe/London', createdBy: integrator.id },
        { transaction },
      );
      await SiteIntegrator.create({ siteId: site.id, userId: integrator.id }, { transaction });
      for (let k = 0; k < 2; k++) {
        const board = ['A', 'B', 'C'][(i + k) % 3];
        const serial = `FL2-${String(2400 + serialNo++).padStart(5, '0')}`;
        const { token, digest } = tokenFor(serial);
        bench.push(`${serial},${token},${model.name},${board}`);
        const silent = i === 4 && k === 1;
        await Logger.create(
          {
            serial, modelId: model.id, board, channel: 'stable', status: 'enrolled', tokenDigest: digest, tokenIssuedAt: now,
            siteId: site.id, enrolledAt: new Date(now.getTime() - (30 + i) * 86400_000), enrolledBy: integrator.id,
            registeredBy: people.get('Morgan')!.id, firmware: board === 'A' ? '2.1.4' : '2.2.0',
            supplyV: board === 'A' ? 4.7 : 5.1,
            lastSeenAt: new Date(now.getTime() - (silent ? 3 * 3600_000 : (5 + i) * 60_000)),
          },
          { transaction },
        );
      }
    }
    // Two registered loggers waiting on the shelf for enrollment.
    for (const board of ['B', 'C']) {
      const serial = `FL2-${String(2400 + serialNo++).padStart(5, '0')}`;
      const { token, digest } = tokenFor(serial);
      bench.push(`${serial},${token},${model.name},${board}`);
      await Logger.create({ serial, modelId: model.id, board, channel: 'stable', status: 'registered', tokenDigest: digest, tokenIssuedAt: now, registeredBy: people.get('Morgan')!.id }, { transaction });
    }
    await Activity.create(
      { actorType: 'system', actorId: null, actorName: 'system', action: 'demo.seeded', targetType: 'system', targetId: null, summary: 'Demo scenario seeded: Fernhollow Energy Co-op', requestId: null, details: { scenario: 'small' } },
      { transaction },
    );
  });
  const demoDir = path.join(options.dataDir, 'demo');
  fs.mkdirSync(demoDir, { recursive: true, mode: 0o700 });
  fs.writeFileSync(path.join(demoDir, 'bench-sheet.csv'), bench.join('\n') + '\n', { mode: 0o600 });
}
