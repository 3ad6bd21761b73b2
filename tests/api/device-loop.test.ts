// The whole device loop with the reference client (scripts/simulator/logger.ts): check-in → offer →
// ranged, resumed download → install reports → confirmation; then reports that repeat or go backwards,
// and a bootloader rollback. Sources: DEVICE_API.md (contract), RFC 9110 §14 (ranges), FIPS 180-4
// SHA-256 through node:crypto (image digests).
import crypto from 'node:crypto';
import { QueryTypes } from 'sequelize';
import { startTestApp, type TestApp } from '../helpers/app';
import { bearer, CHECK_IN, checkInBody, createFleet, type Fleet } from './device-fixtures';
import { VirtualLogger, type LoggerEvent } from '../../scripts/simulator/logger';
import { seededRandom } from '../../scripts/simulator/random';
import { parsePublicKeyPem } from '../../server/images/manifest';

let t: TestApp;
let fleet: Fleet;
let baseUrl: string;
beforeAll(async () => {
  t = await startTestApp();
  fleet = await createFleet(t);
  baseUrl = await t.listen();
});
afterAll(() => t.close());


async function reportOf(loggerId: string, releaseId: string) {
  const rows = await t.sequelize.query<{ state: string; reason: string | null; detail: string | null; confirmed_at: Date | null; finished_at: Date | null }>(
    'SELECT state, reason, detail, confirmed_at, finished_at FROM install_reports WHERE logger_id = :loggerId AND release_id = :releaseId',
    { type: QueryTypes.SELECT, replacements: { loggerId, releaseId } },
  );
  return rows[0] ?? null;
}

describe('the device loop with the reference client', () => {
  test('when a logger is offered a release, then it downloads with interruptions, verifies, installs and is confirmed on the new version', async () => {
    const release = await fleet.release({ version: '2.4.0', imageBytes: crypto.randomBytes(300_000) });
    const lg = await fleet.logger({ board: 'B' });
    let clock = new Date();
    const events: LoggerEvent[] = [];
    const logger = new VirtualLogger(
      { serial: lg.serial, token: lg.token, board: 'B', firmware: '2.3.1', securityCounter: 1, modelId: fleet.model.id },
      {
        baseUrl,
        clock: () => clock,
        random: seededRandom(20261201),
        trustedKeys: [parsePublicKeyPem(fleet.publicKeyPem)],
        interruptRate: 0.6, // most download attempts are cut short part-way, so the image arrives in resumed pieces
        maxDownloadAttempts: 40,
        onEvent: (e) => events.push(e),
      },
    );

    let outcome = null;
    for (let i = 0; i < 10 && outcome === null; i++) {
      outcome = await logger.cycle(clock);
      clock = new Date(logger.nextCheckInAt.getTime());
    }
    expect(outcome).toEqual({ state: 'installed' });
    expect(events.filter((e) => e.kind === 'interrupted').length).toBeGreaterThan(0);
    // Each report moved the row forward; the last one is installed, not yet confirmed (still the old version).
    expect(await reportOf(lg.id, release.id)).toMatchObject({ state: 'installed', confirmed_at: null });

    // The logger reboots into 2.4.0 and checks in: confirmed, and nothing more to offer.
    clock = new Date(clock.getTime() + 60_000);
    const again = await logger.checkIn(clock);
    expect(logger.firmware).toBe('2.4.0');
    expect(again.ok && again.response.offer).toBeNull();
    const row = await reportOf(lg.id, release.id);
    expect(row?.state).toBe('installed');
    expect(row?.confirmed_at).not.toBeNull();
    const [state] = await t.sequelize.query<{ firmware: string }>('SELECT firmware FROM loggers WHERE id = :id', { type: QueryTypes.SELECT, replacements: { id: lg.id } });
    expect(state.firmware).toBe('2.4.0');
  });

  test('when the offer is read, then it carries the exact signed manifest bytes, the signature, key id, algorithm, the signature list and image', async () => {
    const release = await fleet.release({ version: '3.0.0' });
    const lg = await fleet.logger({ board: 'C' });
    const res = await t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('2.9.0', { board: 'C' }));
    expect(res.status).toBe(200);
    expect(res.body.offer).toEqual({
      release: release.id,
      version: '3.0.0',
      security_counter: 1,
      manifest: release.manifest.toString('base64'),
      signature: release.signature.toString('base64'),
      key_id: release.keyId,
      algorithm: 'ed25519',
      // DEVICE_API.md: the list carries every signature, the first repeated in the single fields.
      signatures: [{ key_id: release.keyId, algorithm: 'ed25519', signature: release.signature.toString('base64') }],
      image: { url: `/api/device/v1/images/${release.sha256}`, sha256: release.sha256, size: release.image.length },
    });
    // The logger checks the signature over the exact bytes with node:crypto (RFC 8032 Ed25519).
    const ok = crypto.verify(null, Buffer.from(res.body.offer.manifest, 'base64'), fleet.publicKeyPem, Buffer.from(res.body.offer.signature, 'base64'));
    expect(ok).toBe(true);
    expect(await reportOf(lg.id, release.id)).toMatchObject({ state: 'offered' });
  });
});

describe('install reports', () => {
  test('when reports repeat or go backwards, then they are accepted and ignored, and counts do not change', async () => {
    const release = await fleet.release({ version: '4.0.0', boards: ['A'] });
    const lg = await fleet.logger({ board: 'A' });
    const send = (report?: Record<string, unknown>) =>
      t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('3.9.9', { board: 'A', ...(report ? { report } : {}) }));
    expect((await send()).body.offer?.release).toBe(release.id);
    for (const state of ['downloading', 'downloading', 'downloaded', 'installing', 'downloaded', 'downloading', 'installing']) {
      const res = await send({ release: release.id, state });
      expect(res.status).toBe(200);
    }
    expect(await reportOf(lg.id, release.id)).toMatchObject({ state: 'installing' });
    const [counts] = await t.sequelize.query<{ n: number }>('SELECT count(*)::int AS n FROM install_reports WHERE release_id = :id', {
      type: QueryTypes.SELECT,
      replacements: { id: release.id },
    });
    expect(counts.n).toBe(1);
  });

  test('when a logger reports installed and comes back on the old version, then the install counts as failed (other, rolled back) and is not offered again', async () => {
    const release = await fleet.release({ version: '5.0.0', boards: ['A'] });
    const lg = await fleet.logger({ board: 'A' });
    const send = (report?: Record<string, unknown>) =>
      t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('4.9.0', { board: 'A', ...(report ? { report } : {}) }));
    expect((await send()).body.offer?.release).toBe(release.id);
    await send({ release: release.id, state: 'downloading' });
    await send({ release: release.id, state: 'installing' });
    // The installed report itself may come from the old version, just before the reboot.
    const installed = await send({ release: release.id, state: 'installed' });
    expect(installed.status).toBe(200);
    expect(await reportOf(lg.id, release.id)).toMatchObject({ state: 'installed' });
    // A retried check-in carrying the same report is not a rollback either.
    await send({ release: release.id, state: 'installed' });
    expect(await reportOf(lg.id, release.id)).toMatchObject({ state: 'installed' });
    // Next check-in, still on 4.9.0: the bootloader went back.
    const back = await send();
    expect(back.status).toBe(200);
    expect(await reportOf(lg.id, release.id)).toMatchObject({ state: 'failed', reason: 'other', detail: 'rolled back by the bootloader' });
    expect(back.body.offer).toBeNull();
  });

  test('when an install fails for a transient reason, then the offer stands; for a permanent reason, then it is withdrawn from that logger', async () => {
    const release = await fleet.release({ version: '6.0.0', boards: ['A'] });
    const lg = await fleet.logger({ board: 'A' });
    const send = (report?: Record<string, unknown>) =>
      t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('5.9.0', { board: 'A', ...(report ? { report } : {}) }));
    expect((await send()).body.offer?.release).toBe(release.id);
    const transient = await send({ release: release.id, state: 'failed', reason: 'connection', detail: 'link dropped' });
    expect(transient.body.offer?.release).toBe(release.id);
    // A new attempt after a transient failure moves the row again.
    await send({ release: release.id, state: 'downloading' });
    expect(await reportOf(lg.id, release.id)).toMatchObject({ state: 'downloading' });
    const permanent = await send({ release: release.id, state: 'failed', reason: 'signature' });
    expect(permanent.body.offer).toBeNull();
    expect(await reportOf(lg.id, release.id)).toMatchObject({ state: 'failed', reason: 'signature' });
    // Later reports for the failed attempt are ignored.
    await send({ release: release.id, state: 'installed' });
    expect(await reportOf(lg.id, release.id)).toMatchObject({ state: 'failed', reason: 'signature' });
  });

});
