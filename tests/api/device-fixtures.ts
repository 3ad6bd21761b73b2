// Fixtures for the device API tests: a model, sites, enrolled loggers with tokens, and signed releases
// with their image in the store — inserted through the models, as the releases tests do.
import crypto from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import { Image, Logger, LoggerModel, MeasurementProfile, Release, ReleasePilotSite, SigningKey, Site } from '../../server/db/models';
import { newToken } from '../../server/auth/tokens';
import { canonicalManifest, publicKeyOfPrivatePem, signManifest } from '../../server/images/manifest';
import type { ReleaseState } from '../../server/rollout/lifecycle';
import { startTestApp, type TestApp } from '../helpers/app';
import { measurementProfile } from '../../lib/calibration';

export type Fleet = Awaited<ReturnType<typeof createFleet>>;

/** The device API's check-in path (DEVICE_API.md). */
export const CHECK_IN = '/api/device/v1/check-in';

/** A test app with one hand-built fleet for a test file: opened before its tests and closed after them. */
export function fleetApp(options?: Parameters<typeof startTestApp>[0]) {
  const app = {} as { t: TestApp; fleet: Fleet };
  beforeAll(async () => {
    app.t = await startTestApp(options);
    app.fleet = await createFleet(app.t);
  });
  afterAll(() => app.t?.close());
  return app;
}

let serialSeq = 0;

/**
 * The measurement profile of every enrolled fixture logger, in figures the power-monitor data sheet itself
 * gives (INA226 data sheet SBOS547, Table 1 worked example, docs/SOURCES.md §8): R_SHUNT = 2 mΩ and Current_LSB = 1 mA,
 * so CAL = 0.00512 / (0.001 × 0.002) = 2560 (A00h, Eq. 1) and Power_LSB = 25 × 1 mA = 25 mW. A maximum
 * expected current of 32.768 A makes Eq. 2 (max / 2^15) give exactly that 1 mA; 32.768 A × 2 mΩ = 65.536 mV
 * stays under the shunt register's 81.9175 mV top. The probe at 12 bits converts in at most 750 ms (DS18B20
 * data sheet); Heliodor samples at least 4× that, in whole seconds: 3 s.
 */
export const tableOneProfile = {
  shuntOhm: 0.002,
  maxCurrentA: 32.768,
  currentLsbA: 0.001,
  calibration: 2560,
  powerLsbW: 0.025,
  busVMax: 36,
  tempResolutionBits: 12,
  sampleIntervalS: 3,
} as const;

// The calibration module must agree with the data sheet's figures, or every device test would run on a
// profile Heliodor itself would refuse at enrollment.
{
  const computed = measurementProfile(
    { shuntOhm: tableOneProfile.shuntOhm, maxCurrentA: tableOneProfile.maxCurrentA, panelVocV: 22, tempResolutionBits: 12 },
    { busVMax: 36, shuntFullScaleV: 0.08192, tempResolutions: [9, 10, 11, 12] },
  );
  if (!computed.ok || JSON.stringify(computed.profile) !== JSON.stringify(tableOneProfile)) {
    throw new Error(`lib/calibration.ts disagrees with SBOS547 Table 1: ${JSON.stringify(computed)}`);
  }
}

export async function createFleet(t: TestApp, options: { modelName?: string; checkInIntervalS?: number } = {}) {
  const model = await LoggerModel.create({
    name: options.modelName ?? `FL-2 field logger ${crypto.randomBytes(3).toString('hex')}`,
    boards: [
      { label: 'A', note: 'Original board' },
      { label: 'B', note: 'Bulk capacitors on the supply' },
      { label: 'C', note: 'Switching regulator' },
    ],
    minUpdateSupplyV: 4.6,
    checkInIntervalS: options.checkInIntervalS ?? 900,
    busVMax: 36,
    shuntFullScaleV: 0.08192,
    tempResolutions: [9, 10, 11, 12],
  });
  const site = await Site.create({ name: 'Aldmere Village Hall', customer: 'Aldmere Parish Council', address: '1 Green Lane, Aldmere', latitude: 52.1412, longitude: -1.9821, timeZone: 'Europe/London', createdBy: null });
  const pilotSite = await Site.create({ name: 'Brackenford Pump House', customer: 'Vale Irrigation Group', address: 'Mill Race, Brackenford', latitude: 52.1288, longitude: -1.9534, timeZone: 'Europe/London', createdBy: null });
  const { privateKey } = crypto.generateKeyPairSync('ed25519');
  const privateKeyPem = String(privateKey.export({ type: 'pkcs8', format: 'pem' }));
  const pub = publicKeyOfPrivatePem(privateKeyPem);
  const key = await SigningKey.create({ name: 'Fernhollow release key', keyId: pub.keyId, algorithm: pub.algorithm, publicKeyPem: pub.pem, createdBy: null });

  async function logger(opts: { board?: string; siteId?: string | null; status?: 'registered' | 'enrolled' | 'retired'; channel?: 'stable' | 'early'; profile?: boolean } = {}) {
    const { token, digest } = newToken('hlt_');
    const status = opts.status ?? 'enrolled';
    const row = await Logger.create({
      serial: `FL2-T${String(++serialSeq).padStart(5, '0')}-${crypto.randomBytes(2).toString('hex')}`,
      modelId: model.id,
      board: opts.board ?? 'B',
      channel: opts.channel ?? 'stable',
      status,
      tokenDigest: digest,
      tokenIssuedAt: new Date(),
      siteId: status === 'enrolled' ? (opts.siteId === undefined ? site.id : opts.siteId) : null,
      enrolledAt: status === 'enrolled' ? new Date() : null,
      registeredBy: null,
    });
    if (opts.profile !== false && status === 'enrolled') {
      await MeasurementProfile.create({ loggerId: row.id, version: 1, panelWp: 100, panelVocV: 22, ...tableOneProfile, createdBy: null });
    }
    return { id: row.id, token, serial: row.serial };
  }

  async function release(opts: {
    version: string;
    state?: ReleaseState;
    share?: number;
    boards?: string[];
    securityCounter?: number;
    upgradeFrom?: string | null;
    pilotSiteIds?: string[];
    tripFailureRatio?: number;
    tripMinReports?: number;
    imageBytes?: Buffer;
  }) {
    const image = opts.imageBytes ?? crypto.randomBytes(64 * 1024 + 123);
    const sha256 = crypto.createHash('sha256').update(image).digest('hex');
    fs.writeFileSync(path.join(t.storeDir, sha256), image);
    await Image.findOrCreate({ where: { sha256 }, defaults: { sha256, size: image.length } });
    const boards = opts.boards ?? ['A', 'B', 'C'];
    const manifest = Buffer.from(
      canonicalManifest({
        board_revisions: boards,
        format: 1,
        image_sha256: sha256,
        image_size: image.length,
        issued_at: '2026-11-30T10:00:00Z',
        model: model.id,
        security_counter: opts.securityCounter ?? 1,
        version: opts.version,
      }),
      'utf8',
    );
    const signature = Buffer.from(signManifest(manifest, privateKeyPem), 'base64');
    const state = opts.state ?? 'complete';
    const row = await Release.create({
      modelId: model.id,
      version: opts.version,
      channel: 'stable',
      state,
      share: opts.share ?? (state === 'complete' ? 100 : 0),
      boards,
      manifestBoards: boards,
      upgradeFrom: opts.upgradeFrom ?? null,
      securityCounter: opts.securityCounter ?? 1,
      imageSha256: sha256,
      manifest,
      signature,
      signingKeyId: key.id,
      tripFailureRatio: opts.tripFailureRatio ?? 0.05,
      tripMinReports: opts.tripMinReports ?? 20,
      createdBy: null,
    });
    for (const siteId of opts.pilotSiteIds ?? []) await ReleasePilotSite.create({ releaseId: row.id, siteId });
    return { id: row.id, version: opts.version, sha256, image, manifest, signature, keyId: pub.keyId };
  }

  return { model, site, pilotSite, key, publicKeyPem: pub.pem, logger, release };
}

/** A check-in body as firmware on a healthy FL-2 sends it at noon. */
export function checkInBody(firmware: string, extra: Record<string, unknown> = {}) {
  return {
    firmware,
    board: 'B',
    security_counter: 1,
    uptime_s: 3600,
    reset_reason: 'power_on',
    resets_since_last: 0,
    rssi_dbm: -67,
    free_heap_b: 81234,
    supply_v: 5.1,
    readings: { bus_v: 18.4, current_a: 2.1, power_w: 38.6, energy_wh: 122.5, temp_c: 24.5 },
    config_version: 1,
    ...extra,
  };
}

export const bearer = (token: string) => ({ Authorization: `Bearer ${token}` });
