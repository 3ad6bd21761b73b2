// Writes the full demo scenario (PRODUCT.md): about 240 loggers at 60 sites of Aldmere Vale, the
// demo signing key, six signed releases with their history, install reports, 14 days of check-ins
// and a handful of activity rows that tell the story. Runs inside the caller's transaction; the image
// files and the key files are written first (content-addressed images are harmless if the
// transaction then fails; the key files are replaced by the next seed).
import { randomUUID } from 'node:crypto';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import {
  Activity,
  InstallReport,
  Logger,
  LoggerModel,
  MeasurementProfile,
  Release,
  ReleasePilotSite,
  ReleaseTransition,
  SigningKey,
  Site,
  SiteIntegrator,
  User,
} from '../models';
import { measurementProfile } from '../../../lib/calibration';
import { seededRandom } from '../../../scripts/simulator/random';
import { createDemoKey, demoImage, signDemoManifest, storeImage } from './demo-signing';
import { COUNTER_OF, DAY, HOUR, planFleet, SITE, type PlannedRelease } from './fleet-plan';
import { seedCheckInHistory, ensureHistoryPartitions } from './history';
import { RELEASE_EVENTS } from '../../../schemas/words';

export type FullSeedContext = {
  sequelize: Sequelize;
  transaction: Transaction;
  now: Date;
  people: Map<string, User>;
  model: LoggerModel;
  dataDir: string;
  storeDir: string;
  /** Lines of the bench sheet (header first); tokens are never stored in clear. */
  bench: string[];
  /** Each logger's token and its SHA-256, by serial (server/demo/tokens.ts). */
  tokenFor: (serial: string) => { token: string; digest: string };
};

/** Maximum expected current per panel size (A) with a 5 mΩ shunt: about 1.25 × the panel's current at its rated power. */
const MAX_CURRENT_FOR_PANEL: Record<number, number> = { 80: 6, 100: 8, 150: 10, 200: 14 };
const SHUNT_OHM = 0.005;

export async function seedFullScenario(ctx: FullSeedContext) {
  const { sequelize, transaction, now, people, model } = ctx;
  const random = seededRandom(20261202);
  const plan = planFleet(now);
  const person = (name: string) => people.get(name)!;
  const morgan = person('Morgan');
  const priya = person('Priya');

  // Signing key and images (files first), then the key row.
  const key = createDemoKey(ctx.dataDir);
  const keyRow = await SigningKey.create(
    {
      name: 'Fernhollow demo key', keyId: key.publicKey.keyId, algorithm: key.publicKey.algorithm, publicKeyPem: key.publicKey.pem,
      createdBy: morgan.id, createdAt: new Date(now.getTime() - 130 * DAY),
    },
    { transaction },
  );

  // Sites.
  const siteIds = plan.sites.map(() => randomUUID());
  await Site.bulkCreate(
    plan.sites.map((s) => ({
      id: siteIds[s.index], name: s.name, customer: s.customer, address: s.address, latitude: s.latitude, longitude: s.longitude,
      timeZone: 'Europe/London', createdBy: person(s.integrator).id, createdAt: s.createdAt, updatedAt: s.createdAt,
      notes: s.index === SITE.westbyHut3 ? 'Mast power cut since the storm; the network operator has a visit booked.' : '',
    })),
    { transaction },
  );
  await SiteIntegrator.bulkCreate(
    plan.sites.map((s) => ({ siteId: siteIds[s.index], userId: person(s.integrator).id })),
    { transaction },
  );

  // Releases: image in the store, canonical manifest signed by the demo key, history rows.
  const releaseRows: { plan: PlannedRelease; row: Release }[] = [];
  for (const r of plan.releases.all) {
    const image = await storeImage(ctx.storeDir, demoImage(model.name, r.version));
    await sequelize.query('INSERT INTO images (sha256, size, created_at) VALUES (:sha256, :size, :at) ON CONFLICT (sha256) DO NOTHING', {
      transaction,
      replacements: { sha256: image.sha256, size: image.size, at: r.uploadedAt.toISOString() },
    });
    const signed = signDemoManifest(key, {
      modelId: model.id, version: r.version, boards: r.boards, securityCounter: r.securityCounter, image,
      issuedAt: new Date(Math.floor((r.uploadedAt.getTime() - 2 * HOUR) / 1000) * 1000),
    });
    const lastStep = r.steps[r.steps.length - 1];
    // Who stopped a stopped release (the demo's stops are people's; a trip's figures are not replayed here).
    const row = await Release.create(
      {
        id: r.id, modelId: model.id, version: r.version, channel: r.channel, state: r.state, share: r.share, resumeState: r.resumeState,
        boards: r.boards, manifestBoards: r.boards, upgradeFrom: r.upgradeFrom, daylightWindow: r.daylightWindow,
        securityCounter: r.securityCounter, imageSha256: image.sha256, manifest: signed.manifest, signature: signed.signature,
        signingKeyId: keyRow.id, notes: r.notes, createdBy: priya.id, createdAt: r.uploadedAt, updatedAt: lastStep.at,
        pilotedAt: r.pilotedAt, widenedAt: r.widenedAt, completedAt: r.completedAt, stoppedAt: r.stoppedAt, stoppedBy: r.stoppedBy,
      },
      { transaction },
    );
    releaseRows.push({ plan: r, row });
    await ReleasePilotSite.bulkCreate(r.pilotSites.map((i) => ({ releaseId: r.id, siteId: siteIds[i] })), { transaction });
    await ReleaseTransition.bulkCreate(
      r.steps.map((s) => ({
        releaseId: r.id, at: s.at, action: s.action, fromState: s.fromState, toState: s.toState, share: s.shareAfter, reason: s.reason ?? null,
        actorType: s.actor === 'system' ? ('system' as const) : ('person' as const), actorName: s.actor,
      })),
      { transaction },
    );
  }

  // Loggers, their tokens (bench sheet only), install details and measurement profiles.
  const limits = { busVMax: Number(model.busVMax), shuntFullScaleV: Number(model.shuntFullScaleV), tempResolutions: model.tempResolutions.map(Number) };
  const computed = new Map<number, ReturnType<typeof computeProfile>>();
  const computeProfile = (panelWp: number) => {
    const result = measurementProfile({ shuntOhm: SHUNT_OHM, maxCurrentA: MAX_CURRENT_FOR_PANEL[panelWp], panelVocV: 22, tempResolutionBits: 12 }, limits);
    if (!result.ok) throw new Error(`demo profile refused: ${result.errors.map((e) => e.message).join('; ')}`);
    return result.profile;
  };
  const profileFor = (panelWp: number) => {
    if (!computed.has(panelWp)) computed.set(panelWp, computeProfile(panelWp));
    return computed.get(panelWp)!;
  };
  // The bench sheet also says what each logger runs, so the fleet simulator can start from the seeded state.
  ctx.bench[0] = 'serial,token,model,board,firmware,security_counter';
  const loggerRows = [];
  const profiles = [];
  for (const l of plan.loggers) {
    const { token, digest } = ctx.tokenFor(l.serial);
    if (l.status !== 'retired') ctx.bench.push(`${l.serial},${token},${model.name},${l.board},${l.firmware ?? ''},${l.firmware ? (COUNTER_OF[l.firmware] ?? 0) : ''}`);
    const site = l.siteIndex === null ? null : plan.sites[l.siteIndex];
    const integrator = l.enrolledBy ? person(l.enrolledBy) : null;
    loggerRows.push({
      id: l.id, serial: l.serial, modelId: model.id, board: l.board, channel: l.channel, status: l.status,
      tokenDigest: digest, tokenIssuedAt: l.enrolledAt ? new Date(l.enrolledAt.getTime() - 3 * DAY) : new Date(now.getTime() - 2 * DAY),
      siteId: site ? siteIds[site.index] : null, enrolledAt: l.enrolledAt, enrolledBy: integrator?.id ?? null,
      install: site ? { panelWp: l.panelWp, panelVocV: 22, notes: l.roles.includes('stepping_stone') ? 'Spare board B in place of the flooded logger.' : '' } : null,
      registeredBy: morgan.id, retiredAt: l.retiredAt, firmware: l.firmware, supplyV: null, lastSeenAt: l.lastAt,
      createdAt: l.enrolledAt ? new Date(l.enrolledAt.getTime() - 3 * DAY) : new Date(now.getTime() - 2 * DAY),
      updatedAt: l.lastAt ?? new Date(now.getTime() - 2 * DAY),
    });
    if (site) {
      const versions = l.profileChangedAt ? [1, 2] : [1];
      for (const version of versions) {
        const panelWp = version === 2 ? 200 : l.panelWp;
        profiles.push({
          loggerId: l.id, version, panelWp, panelVocV: 22, ...profileFor(panelWp),
          createdBy: integrator?.id ?? null, createdAt: version === 2 ? l.profileChangedAt! : l.enrolledAt!,
        });
      }
      if (l.profileChangedAt) loggerRows[loggerRows.length - 1].install = { panelWp: 200, panelVocV: 22, notes: 'Panel upgraded to 200 Wp.' };
    }
  }
  await Logger.bulkCreate(loggerRows, { transaction });
  await MeasurementProfile.bulkCreate(profiles, { transaction });

  const reports = plan.loggers.flatMap((l) => l.reports.map((r) => ({ loggerId: l.id, ...r, retriedAt: null })));
  await InstallReport.bulkCreate(reports, { transaction });

  // Check-in history and the latest state.
  await ensureHistoryPartitions(sequelize, transaction, now);
  await seedCheckInHistory(sequelize, transaction, plan, random);

  await seedNotes(ctx, plan, siteIds);

  // The story, as the activity log tells it.
  const serialAt = (siteIndex: number, role: string) => plan.loggers.find((l) => l.siteIndex === siteIndex && l.roles.includes(role as never));
  const entries: { at: Date; actor: User | null; action: string; targetType: string; targetId: string | null; summary: string; details?: Record<string, unknown> }[] = [];
  entries.push({
    at: new Date(now.getTime() - 130 * DAY), actor: morgan, action: 'key.registered', targetType: 'signing_key', targetId: keyRow.id,
    summary: `Morgan registered signing key "Fernhollow demo key" (key id ${keyRow.keyId}, ed25519)`,
  });
  for (const { plan: r } of releaseRows) {
    for (const s of r.steps) {
      const actor = s.actor === 'system' ? null : person(s.actor);
      const name = `${model.name} ${r.version}`;
      const summary =
        s.action === 'upload'
          ? `${s.actor} uploaded ${name} (draft, ${r.channel}, signed by key ${keyRow.keyId})`
          : s.action === 'widen'
            ? `${s.actor} widened ${name} to ${s.shareAfter} %`
            : s.action === 'start_pilot'
              ? `${s.actor} started the pilot of ${name}`
              : s.action === 'complete'
                ? `${s.actor} completed the rollout of ${name}`
                : `${s.actor} stopped ${name}${s.reason ? `: ${s.reason}` : ''}`;
      entries.push({
        at: s.at, actor, action: s.action === 'upload' ? 'release.uploaded' : RELEASE_EVENTS[s.action], targetType: 'release', targetId: r.id, summary,
        details:
          s.action === 'upload'
            ? undefined
            : {
                fromState: s.fromState, toState: s.toState, share: s.shareAfter, reason: s.reason ?? null,
                // As the writer of transitions records a stop (server/releases/transitions.ts).
                ...(s.action === 'stop' ? { by: s.actor === 'system' ? 'trip' : 'person', rule: null, figures: null } : {}),
              },
      });
    }
  }
  const boatSpare = serialAt(SITE.boatClub, 'stepping_stone');
  const flooded = plan.loggers.find((l) => l.siteIndex === SITE.boatClub && l.status === 'retired');
  const struck = plan.loggers.find((l) => l.siteIndex === SITE.westbyChapel && l.status === 'retired');
  for (const gone of [struck, flooded]) {
    if (gone) {
      entries.push({
        at: gone.retiredAt!, actor: morgan, action: 'logger.retired', targetType: 'logger', targetId: gone.id,
        summary: `Logger ${gone.serial} retired: ${gone.retireReason}`, details: { reason: gone.retireReason },
      });
    }
  }
  if (boatSpare) {
    entries.push({
      at: boatSpare.enrolledAt!, actor: person('Ade'), action: 'logger.enrolled', targetType: 'logger', targetId: boatSpare.id,
      summary: `Ade enrolled logger ${boatSpare.serial} at Aldwater Boat Club (profile version 1)`,
    });
  }
  const upgraded = plan.loggers.find((l) => l.profileChangedAt);
  if (upgraded) {
    const by = upgraded.enrolledBy ?? 'Tomasz';
    entries.push({
      at: upgraded.profileChangedAt!, actor: person(by), action: 'profile.changed', targetType: 'logger', targetId: upgraded.id,
      summary: `${by} changed the measurement profile of logger ${upgraded.serial} to version 2 (panel upgraded to 200 Wp)`,
    });
  }
  const newest = plan.sites[plan.sites.length - 1];
  entries.push({
    at: newest.createdAt, actor: person(newest.integrator), action: 'site.created', targetType: 'site', targetId: siteIds[newest.index],
    summary: `${newest.integrator} created site ${newest.name} (${newest.customer})`,
  });
  entries.push({
    at: now, actor: null, action: 'demo.seeded', targetType: 'system', targetId: null,
    summary: `Demo scenario seeded: Fernhollow Energy Co-op, ${plan.loggers.filter((l) => l.status === 'enrolled').length} loggers at ${plan.sites.length} sites`,
    // The living demo plans the fleet again from this time to know which logger plays which part.
    details: { scenario: 'full' },
  });
  await Activity.bulkCreate(
    entries
      .sort((a, b) => a.at.getTime() - b.at.getTime())
      .map((e) => ({
        at: e.at, actorType: e.actor ? ('person' as const) : ('system' as const), actorId: e.actor?.id ?? null, actorName: e.actor?.name ?? 'system',
        action: e.action, targetType: e.targetType, targetId: e.targetId, summary: e.summary, requestId: null, details: e.details ?? null,
      })),
    { transaction },
  );
  return plan;
}

/**
 * A few notes by support and the team, when the notes table exists (the fleet views add it); the
 * seed runs on whichever schema is migrated, so it looks before it writes.
 */
async function seedNotes(ctx: FullSeedContext, plan: ReturnType<typeof planFleet>, siteIds: string[]) {
  const { sequelize, transaction, now, people } = ctx;
  const columns = await sequelize.query<{ column_name: string }>(
    "SELECT column_name FROM information_schema.columns WHERE table_schema = 'public' AND table_name = 'notes'",
    { transaction, type: QueryTypes.SELECT },
  );
  const have = new Set(columns.map((c) => c.column_name));
  if (!['target_type', 'target_id', 'text', 'author_id', 'author_name', 'created_at'].every((c) => have.has(c))) return;
  const role = (r: string) => plan.loggers.find((l) => l.roles.includes(r as never));
  const notes: { targetType: 'logger' | 'site'; targetId: string | undefined; text: string; author: string; at: Date }[] = [
    {
      targetType: 'site', targetId: siteIds[SITE.westbyHut3], author: 'Lena', at: new Date(now.getTime() - 2 * DAY - 3 * HOUR),
      text: 'Vale Link confirmed the mast power cut after the storm. The loggers come back by themselves when power is restored; no visit needed from us.',
    },
    {
      targetType: 'logger', targetId: role('low_supply')?.id, author: 'Lena', at: new Date(now.getTime() - 4 * DAY - 5 * HOUR),
      text: 'Supply sits around 4.4 V since the new pump controller went in on the same supply. Ade will check it on his next round; 2.3.0 waits until then (supply guard).',
    },
    {
      targetType: 'logger', targetId: role('failed_storage')?.id, author: 'Priya', at: new Date(now.getTime() - 3 * DAY - 2 * HOUR),
      text: 'Flash write verify failed installing 2.3.0. Not retrying until Tomasz has swapped the board.',
    },
    {
      targetType: 'logger', targetId: role('probe_fault')?.id, author: 'Lena', at: new Date(now.getTime() - 90 * 60_000),
      text: 'Temperature reads 85 °C: the probe\'s power-on value, so the probe is not answering. Probably the probe cable again.',
    },
    {
      targetType: 'logger', targetId: role('stepping_stone')?.id, author: 'Ade', at: new Date(now.getTime() - 5 * HOUR),
      text: 'Spare board B fitted in place of the flooded logger. It left the bench on 2.0.3, so it steps through 2.1.4 first.',
    },
  ];
  for (const n of notes.filter((x) => x.targetId)) {
    const author = people.get(n.author)!;
    await sequelize.query(
      `INSERT INTO notes (target_type, target_id, text, author_id, author_name, created_at)
       VALUES (:targetType, :targetId, :text, :authorId, :authorName, :at)`,
      { transaction, replacements: { targetType: n.targetType, targetId: n.targetId, text: n.text, authorId: author.id, authorName: author.name, at: n.at.toISOString() } },
    );
  }
}
