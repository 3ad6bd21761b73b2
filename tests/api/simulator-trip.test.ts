// The fleet simulator's --fail-rate against the real app: when a share of installs fail, the release's
// trip (the rule: failure ratio over a minimum number of finished installs) stops the
// rollout, and from then on no logger is offered it. Sources: DEVICE_API.md rule 6 (a stopped release
// offers nothing; a logger whose install failed for integrity, storage or other is not offered it again).
import crypto from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import { listeningApp, testPassword } from '../helpers/app';
import { buildFleet, ConsoleSession, FleetTally, firmwareByBoard, readBenchSheet, registerFleet, runFleet } from '../../scripts/simulator/fleet';
import { seededRandom } from '../../scripts/simulator/random';
import { canonicalManifest, parsePublicKeyPem, signManifest } from '../../server/images/manifest';

let clock = new Date('2026-06-21T08:00:00Z');
const app = listeningApp({ seed: 'demo', now: () => clock });

describe('a simulated fleet with failing installs', () => {
  test('when half the installs fail, then the release stops itself once the failure ratio passes its threshold, and nobody is offered it afterwards', async () => {
    const morgan = new ConsoleSession(app.base);
    await morgan.signIn('morgan@fernhollow.example', testPassword);
    const pair = crypto.generateKeyPairSync('ed25519');
    const publicPem = String(pair.publicKey.export({ type: 'spki', format: 'pem' }));
    await morgan.request('POST', '/api/keys', { name: 'Fernhollow release key 2026', publicKeyPem: publicPem });
    const modelId = (await morgan.request<{ rows: { id: string; name: string }[] }>('GET', '/api/models')).rows.find((m) => m.name === 'FL-2 field logger')!.id;

    const random = seededRandom(5);
    const firmware = firmwareByBoard('A=2.1.4,B=2.2.0,C=2.2.0');
    const bench = readBenchSheet(fs.readFileSync(path.join(app.t.dataDir, 'demo', 'bench-sheet.csv'), 'utf8'));
    const registered = await registerFleet(morgan, { count: 28, firmware, random, serialPrefix: 'FL2-FAIL' });
    const identities = [...bench.map((r) => ({ serial: r.serial, token: r.token, board: r.board, firmware: firmware(r.board) })), ...registered];

    // 2.3.0 for every board, straight to 100 %, stopping when more than 20 % of at least 8 finished installs fail.
    const image = crypto.randomBytes(32 * 1024);
    const manifest = canonicalManifest({
      board_revisions: ['A', 'B', 'C'], format: 1, image_sha256: crypto.createHash('sha256').update(image).digest('hex'), image_size: image.length,
      issued_at: '2026-06-20T10:00:00Z', model: modelId, security_counter: 1, version: '2.3.0',
    });
    const form = new FormData();
    form.append('image', new Blob([image]), 'fl2-2.3.0.bin');
    form.append('manifest', new Blob([manifest], { type: 'application/json' }), 'manifest.json');
    form.append('signature', signManifest(manifest, String(pair.privateKey.export({ type: 'pkcs8', format: 'pem' }))));
    const release = await morgan.request<{ id: string }>('POST', '/api/releases', form);
    await morgan.request('PATCH', `/api/releases/${release.id}`, { tripFailureRatio: 0.2, tripMinReports: 8 });
    await morgan.request('POST', `/api/releases/${release.id}/transitions`, { action: 'start_pilot' });
    await morgan.request('POST', `/api/releases/${release.id}/transitions`, { action: 'complete' });

    const tally = new FleetTally();
    const loggers = buildFleet(identities, { baseUrl: app.base, clock: () => clock, random, trustedKeys: [parsePublicKeyPem(publicPem)], failRate: 0.5, spreadS: 900 }, tally);
    const state = async () => (await morgan.request<{ state: string }>('GET', `/api/releases/${release.id}`)).state;
    for (let step = 0; step < 12 && (await state()) !== 'stopped'; step++) {
      await runFleet(loggers, {
        clock: () => clock,
        until: new Date(clock.getTime() + 1200_000),
        concurrency: 16,
        tally,
        waitUntil: async (at) => {
          clock = new Date(Math.max(clock.getTime(), Math.ceil(at.getTime() / 300_000) * 300_000));
        },
      });
    }
    type Counts = { installed: number; failed: number; failedByReason: Record<string, number> };
    const stopped = await morgan.request<{ state: string; counts: Counts; history: { action: string; actorName: string }[] }>('GET', `/api/releases/${release.id}`);
    expect(stopped.state).toBe('stopped');
    expect(stopped.history.filter((h) => h.action === 'stop')).toEqual([expect.objectContaining({ actorName: 'system' })]);
    // The server counted every simulated failure by its reason (integrity, storage, other: the ones that count towards a stop),
    // and the ratio it stopped on passed 20 % of at least 8 finished installs.
    for (const reason of ['integrity', 'storage', 'other']) expect(stopped.counts.failedByReason[reason]).toBe(tally.counts.failuresByReason[reason] ?? 0);
    const counted = stopped.counts.failedByReason.integrity + stopped.counts.failedByReason.storage + stopped.counts.failedByReason.other;
    expect(stopped.counts.installed + counted).toBeGreaterThanOrEqual(8);
    expect(counted / (stopped.counts.installed + counted)).toBeGreaterThan(0.2);

    // After the stop: another two hours of check-ins, and not one more install is started.
    const offersAtStop = tally.counts.offers;
    await runFleet(loggers, {
      clock: () => clock,
      until: new Date(clock.getTime() + 7200_000),
      concurrency: 16,
      tally,
      waitUntil: async (at) => {
        clock = new Date(Math.max(clock.getTime(), Math.ceil(at.getTime() / 300_000) * 300_000));
      },
    });
    expect(tally.counts.offers).toBe(offersAtStop);
    expect(tally.counts.errors).toBe(0);
  }, 300_000);
});
