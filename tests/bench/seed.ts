// The benchmark's fleet: PRODUCT.md's Fernhollow scenario grown to a given size (default 100 000
// enrolled loggers), written set-based inside PostgreSQL (INSERT … SELECT generate_series …) on one
// session, so 100 000 loggers seed in seconds rather than minutes.
//
// - 2 models (FL-2 and an invented FL-3 field logger), boards A/B/C by site age (oldest sites A, newest C,
//   one logger in ten with another board), ~1 % of sites on the early channel.
// - Sites: the 60 named sites of the demo scenario first (so the releases' pilot sites are the demo's),
//   then invented ones built from the Vale's villages and kinds of site ("Tarnwick Pump House 12"),
//   4 loggers each.
// - Releases per model: the demo's history (2.0.3, 2.1.4, 2.2.0 complete; 2.3.0 widening at 25 %,
//   live; 3.0.0-beta.1 stopped and 3.0.0-rc.1 in pilot on early), signed by a demo key like the demo seed.
// - Install reports for the live release as the cohort rule would place them (pilot sites, or the
//   logger's SHA-256 bucket below the share, cohort.ts), with the funnel spread over its states.
// - Latest state on every logger row (firmware, last_seen_at, supply_v, readings.temp_c, recent_resets)
//   with a few per cent silent, low-supply, unstable and probe-fault loggers.
// - 72 hours of hourly check-in history for one logger in 20 and for every token-holding logger.
// - Ids are derived from fixed text, values from hashes (no random numbers): every run seeds the same fleet.
// - Tokens: derived from the serial (SHA-256 of a fixed text, base64url, as real tokens look), so the
//   bench can rebuild the plain tokens of the loggers it checks in as; only digests are stored.
import { createHash } from 'node:crypto';
import { Client } from 'pg';
import { hashPassword } from '../../server/auth/passwords';
import { measurementProfile } from '../../lib/calibration';
import { partitionName, utcDay } from '../../server/device-api/partitions';
import { boardSupplies } from '../../scripts/simulator/readings';
import { createDemoKey, demoImage, signDemoManifest, storeImage } from '../../server/db/seed/demo-signing';
import { COUNTER_OF, daysAgoAt, EARLY_SITES, planReleases, SITE, type PlannedRelease } from '../../server/db/seed/fleet-plan';
import { demoEmail, demoModel, demoPeople, integratorOf, valeSites, valeVillages } from '../../server/db/seed/scenario';

export const BENCH_PASSWORD = 'bench sheet kept on the bench';
export const HISTORY_HOURS = 72;
const DAY = 86_400_000;

/** A logger the bench checks in as; `liveReport` is its install report's state on the live release, if it was offered it. */
export type TokenLogger = { id: string; serial: string; token: string; firmware: string; board: string; securityCounter: number; liveReport: string | null };

export type SeededFleet = {
  loggers: number;
  sites: number;
  checkIns: number;
  installReports: number;
  /** The live release of the FL-2: 2.3.0, widening. */
  liveReleaseId: string;
  /** A token-holding logger with check-in history (the timeline scenario). */
  timelineLoggerId: string;
  tokenLoggers: TokenLogger[];
  people: { support: string; releaseEngineer: string };
  seconds: Record<string, number>;
};

/** The plain token of a bench logger, the same text the seed's SQL derives. */
export function benchToken(serial: string): string {
  return 'hlt_' + createHash('sha256').update(`heliodor bench logger ${serial}`, 'utf8').digest('base64url');
}

/** A UUID-shaped id derived from text (the MD5 digest in UUID form, as PostgreSQL's md5(…)::uuid gives). */
function fixedUuid(text: string): string {
  const h = createHash('md5').update(`heliodor bench ${text}`, 'utf8').digest('hex');
  return `${h.slice(0, 8)}-${h.slice(8, 12)}-${h.slice(12, 16)}-${h.slice(16, 20)}-${h.slice(20)}`;
}

/** Kinds of site in the Vale and who the customer usually is ({v}: the village). */
const SITE_KINDS: [string, string][] = [
  ['Village Hall', '{v} Parish Council'],
  ['Pump House', 'Vale Irrigation Group'],
  ['Dairy', '{v} Dairy Farm'],
  ['Telecom Hut', 'Vale Link Networks'],
  ['Primary School', '{v} Primary School'],
  ['Boat Sheds', '{v} Rowing Club'],
  ['Allotments', '{v} Allotment Society'],
  ['Scout Hut', '{v} Scout Group'],
  ['Cricket Pavilion', '{v} Cricket Club'],
  ['Church Hall', '{v} Parochial Church Council'],
  ['Community Shop', '{v} Community Shop Ltd'],
  ['Glasshouses', '{v} Growers'],
  ['Fire Station', 'Vale Fire and Rescue'],
  ['Library', 'Vale Libraries'],
  ['Surgery', 'Aldmere Vale Health Centre'],
  ['Bowls Club', '{v} Bowls Club'],
];

const SECOND_MODEL = { ...demoModel, name: 'FL-3 field logger' };

export async function seedBench(
  url: string,
  options: { loggers: number; tokenLoggers: number; now: Date; dataDir: string; storeDir: string; log: (msg: string) => void },
): Promise<SeededFleet> {
  const { now } = options;
  const n = options.loggers;
  const siteCount = Math.ceil(n / 4);
  if (siteCount < valeSites.length) throw new Error(`--loggers must be at least ${valeSites.length * 4} (the demo's ${valeSites.length} sites, 4 loggers each)`);
  const tokenCount = Math.min(options.tokenLoggers, Math.floor(n / 4));
  const tokenStride = Math.floor(n / tokenCount);
  const seconds: Record<string, number> = {};
  let mark = Date.now();
  const step = (name: string) => {
    const t = Date.now();
    seconds[name] = (t - mark) / 1000;
    options.log(`  ${name}: ${seconds[name].toFixed(1)} s`);
    mark = t;
  };

  const nowLit = `CAST('${now.toISOString()}' AS timestamptz)`;
  const db = new Client({ connectionString: url });
  await db.connect();
  try {
    await db.query("SET work_mem = '256MB'; SET maintenance_work_mem = '512MB'; SET jit = off");
    await db.query('BEGIN');
    // A uniform number in [0, 1) drawn from text, so every run seeds the same fleet.
    await db.query(
      `CREATE FUNCTION pg_temp.bench_u(text) RETURNS float8 LANGUAGE sql IMMUTABLE AS $$ SELECT (hashtext($1)::bigint + 2147483648)::float8 / 4294967296 $$`,
    );

    // ─── People, models, key, releases ───────────────────────────────────
    const passwordHash = await hashPassword(BENCH_PASSWORD, 4);
    const people: Record<string, string> = {};
    for (const p of demoPeople) {
      const r = await db.query<{ id: string }>('INSERT INTO users (email, name, role, password_hash) VALUES ($1, $2, $3, $4) RETURNING id', [
        demoEmail(p.name),
        p.name,
        p.role,
        passwordHash,
      ]);
      people[p.name] = r.rows[0].id;
    }
    const modelIds: string[] = [];
    for (const m of [demoModel, SECOND_MODEL]) {
      const r = await db.query<{ id: string }>(
        `INSERT INTO models (name, boards, min_update_supply_v, check_in_interval_s, bus_v_max, shunt_full_scale_v, temp_resolutions)
         VALUES ($1, $2, $3, $4, $5, $6, $7) RETURNING id`,
        [m.name, JSON.stringify(m.boards), m.minUpdateSupplyV, m.checkInIntervalS, m.busVMax, m.shuntFullScaleV, m.tempResolutions],
      );
      modelIds.push(r.rows[0].id);
    }
    const key = createDemoKey(options.dataDir);
    const keyRow = await db.query<{ id: string }>(
      `INSERT INTO signing_keys (name, key_id, algorithm, public_key_pem, created_by, created_at) VALUES ($1, $2, $3, $4, $5, $6) RETURNING id`,
      ['Fernhollow demo key', key.publicKey.keyId, key.publicKey.algorithm, key.publicKey.pem, people.Morgan, new Date(now.getTime() - 130 * DAY)],
    );
    const widenedAt = daysAgoAt(now, 2, 10, 40);
    const plans = modelIds.map(() => planReleases(now, widenedAt));
    // Fixed ids (logger, site and release ids alike), so the share's cohort buckets, and so the fleet, are the same on every run.
    plans.forEach((plan, m) => plan.all.forEach((r) => (r.id = fixedUuid(`release ${m} ${r.version}`))));
    const siteIds: string[] = [];
    // Site ids first: releases name their pilot sites.
    const ids = await db.query<{ id: string }>("SELECT CAST(md5('heliodor bench site ' || i) AS uuid) AS id FROM generate_series(1, $1) AS i ORDER BY i", [siteCount]);
    for (const r of ids.rows) siteIds.push(r.id);
    step('people, models, key');

    // ─── Sites ───────────────────────────────────────────────────────────
    const villages = Object.values(valeVillages).map((v, i) => ({ v: i, name: v.name, lat: v.latitude, lon: v.longitude, integrator: people[integratorOf(v)] }));
    await db.query(
      `CREATE TEMP TABLE bench_villages AS SELECT * FROM json_to_recordset($1::json) AS x(v int, name text, lat float8, lon float8, integrator uuid)`,
      [JSON.stringify(villages)],
    );
    await db.query(`CREATE TEMP TABLE bench_kinds AS SELECT (k - 1) AS k, kind, customer FROM unnest($1::text[], $2::text[]) WITH ORDINALITY AS x(kind, customer, k)`, [
      SITE_KINDS.map((k) => k[0]),
      SITE_KINDS.map((k) => k[1]),
    ]);
    const named = valeSites.map((s, idx) => {
      const village = valeVillages[s.village];
      return {
        idx, name: s.name, customer: s.customer, address: s.address, v: Object.keys(valeVillages).indexOf(s.village),
        lat: s.latitude ?? village.latitude, lon: s.longitude ?? village.longitude,
      };
    });
    await db.query(
      `CREATE TEMP TABLE bench_sites AS
       SELECT x.idx, ($2::uuid[])[x.idx + 1] AS id, x.name, x.customer, x.address, x.v, x.lat, x.lon
         FROM json_to_recordset($1::json) AS x(idx int, name text, customer text, address text, v int, lat float8, lon float8)`,
      [JSON.stringify(named), siteIds],
    );
    // Invented sites: village × kind of site × a running number ("Tarnwick Pump House 12").
    await db.query(
      `INSERT INTO bench_sites (idx, id, name, customer, address, v, lat, lon)
       SELECT j + 60, ($1::uuid[])[j + 61], v.name || ' ' || k.kind || ' ' || (j / 192 + 1), replace(k.customer, '{v}', v.name),
              (j / 192 + 1) || ' ' || k.kind || ' Lane, ' || v.name, v.v,
              v.lat + (pg_temp.bench_u(j || ':lat') - 0.5) * 0.03, v.lon + (pg_temp.bench_u(j || ':lon') - 0.5) * 0.05
         FROM generate_series(0, $2 - 61) AS j
         JOIN bench_villages v ON v.v = j % 12
         JOIN bench_kinds k ON k.k = (j / 12) % 16`,
      [siteIds, siteCount],
    );
    // The oldest sites first, over some 500 days.
    await db.query(
      `ALTER TABLE bench_sites ADD COLUMN created_at timestamptz, ADD COLUMN integrator uuid;
       UPDATE bench_sites s SET created_at = ${nowLit} - make_interval(days => CAST(500 - 480.0 * s.idx / ${siteCount} AS int)), integrator = v.integrator
         FROM bench_villages v WHERE v.v = s.v;
       CREATE UNIQUE INDEX ON bench_sites (idx); ANALYZE bench_sites`,
    );
    await db.query(
      `INSERT INTO sites (id, name, customer, address, latitude, longitude, time_zone, created_by, created_at, updated_at)
       SELECT id, name, customer, address, round(lat::numeric, 6), round(lon::numeric, 6), 'Europe/London', integrator, created_at, created_at FROM bench_sites;
       INSERT INTO site_integrators (site_id, user_id) SELECT id, integrator FROM bench_sites`,
    );
    step('sites');

    // Releases (after the sites: pilot sites refer to them).
    const releaseRows: { model: number; plan: PlannedRelease }[] = [];
    for (const [m, plan] of plans.entries()) {
      const modelName = m === 0 ? demoModel.name : SECOND_MODEL.name;
      for (const r of plan.all) {
        const image = await storeImage(options.storeDir, demoImage(modelName, r.version));
        await db.query('INSERT INTO images (sha256, size, created_at) VALUES ($1, $2, $3) ON CONFLICT (sha256) DO NOTHING', [image.sha256, image.size, r.uploadedAt]);
        const signed = signDemoManifest(key, {
          modelId: modelIds[m], version: r.version, boards: r.boards, securityCounter: r.securityCounter, image,
          issuedAt: new Date(Math.floor((r.uploadedAt.getTime() - 2 * 3_600_000) / 1000) * 1000),
        });
        const last = r.steps[r.steps.length - 1];
        await db.query(
          `INSERT INTO releases (id, model_id, version, channel, state, share, resume_state, boards, manifest_boards, upgrade_from, daylight_window,
                                 security_counter, image_sha256, manifest, signature, signing_key_id, notes, created_by, created_at, updated_at,
                                 piloted_at, widened_at, completed_at, stopped_at)
           VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $8, $9, $10, $11, $12, $13, $14, $15, $16, $17, $18, $19, $20, $21, $22, $23)`,
          [
            r.id, modelIds[m], r.version, r.channel, r.state, r.share, r.resumeState, r.boards, r.upgradeFrom, r.daylightWindow,
            r.securityCounter, image.sha256, signed.manifest, signed.signature, keyRow.rows[0].id, r.notes, people.Priya, r.uploadedAt, last.at,
            r.pilotedAt, r.widenedAt, r.completedAt, r.stoppedAt,
          ],
        );
        await db.query('INSERT INTO release_pilot_sites (release_id, site_id) SELECT $1, unnest($2::uuid[])', [r.id, r.pilotSites.map((i) => siteIds[i])]);
        for (const s of r.steps) {
          await db.query(
            `INSERT INTO release_transitions (release_id, at, action, from_state, to_state, share, reason, actor_type, actor_name)
             VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9)`,
            [r.id, s.at, s.action, s.fromState, s.toState, s.shareAfter, s.reason ?? null, s.actor === 'system' ? 'system' : 'person', s.actor],
          );
        }
        releaseRows.push({ model: m, plan: r });
      }
    }
    step('releases (signed)');

    // ─── Loggers ─────────────────────────────────────────────────────────
    const counters = Object.entries(COUNTER_OF);
    const supply = (b: string) => boardSupplies[b];
    await db.query(
      `CREATE TEMP TABLE bench_loggers AS
       SELECT g, CAST(md5('heliodor bench logger ' || g) AS uuid) AS id, g / 4 AS site_idx,
              pg_temp.bench_u(g || ':fw') AS u_fw, pg_temp.bench_u(g || ':board') AS u_board, pg_temp.bench_u(g || ':silent') AS u_silent,
              pg_temp.bench_u(g || ':low') AS u_low, pg_temp.bench_u(g || ':unstable') AS u_unstable, pg_temp.bench_u(g || ':probe') AS u_probe,
              pg_temp.bench_u(g || ':seen') AS u_seen, pg_temp.bench_u(g || ':g1') AS u_g1, pg_temp.bench_u(g || ':g2') AS u_g2,
              pg_temp.bench_u(g || ':report') AS u_report, pg_temp.bench_u(g || ':when') AS u_when, pg_temp.bench_u(g || ':temp') AS u_temp
         FROM generate_series(0, $1 - 1) AS g`,
      [n],
    );
    const plan0 = plans[0];
    await db.query(
      `CREATE TEMP TABLE bench_l2 AS
       SELECT b.*, s.id AS site_id, s.created_at AS site_created, s.integrator,
              CASE WHEN s.idx % 10 < 7 THEN 0 ELSE 1 END AS model_no,
              (ARRAY['A', 'B', 'C'])[((LEAST(2, (b.site_idx * 3) / $1) + CASE WHEN b.u_board < 0.1 THEN 1 ELSE 0 END) % 3) + 1] AS board,
              CASE WHEN b.site_idx = ANY($2::int[]) OR b.site_idx % 97 = 5 THEN 'early' ELSE 'stable' END AS channel,
              b.u_silent < 0.02 AS silent, b.u_low < 0.03 AS low, b.u_unstable < 0.01 AS unstable, b.u_probe < 0.003 AS probe,
              (b.g % $3 = 1 AND b.g / $3 < $4) AS has_token
         FROM bench_loggers b JOIN bench_sites s ON s.idx = b.site_idx`,
      [siteCount, [...EARLY_SITES], tokenStride, tokenCount],
    );
    await db.query(
      `CREATE TEMP TABLE bench_l3 AS
       SELECT l.*,
              CASE
                WHEN l.channel = 'early' AND l.board <> 'A' THEN CASE WHEN l.u_fw < 0.3 THEN '3.0.0-beta.1' ELSE '2.2.0' END
                WHEN l.board = 'A' THEN CASE WHEN l.u_fw < 0.04 THEN '2.0.3' WHEN l.u_fw < 0.15 THEN '2.1.4' ELSE '2.2.0' END
                ELSE CASE WHEN l.u_fw < 0.02 THEN '2.0.3' WHEN l.u_fw < 0.08 THEN '2.1.4' ELSE '2.2.0' END
              END AS fw0,
              ($1::uuid[])[l.model_no + 1] AS live_id, ($2::uuid[])[l.model_no + 1] AS rc_id, ($3::uuid[])[l.model_no + 1] AS beta_id
         FROM bench_l2 l`,
      [plans.map((p) => p.r230.id), plans.map((p) => p.rc1.id), plans.map((p) => p.beta1.id)],
    );
    // Where each logger stands with the live release (2.3.0, boards B and C, from >=2.1.0, 25 %) and the early channel's two.
    await db.query(
      `CREATE TEMP TABLE bench_l4 AS
       SELECT l.*,
              CASE WHEN l.channel = 'stable' AND l.board IN ('B', 'C') AND l.fw0 IN ('2.1.4', '2.2.0') AND NOT l.silent AND NOT l.low
                        AND (l.site_idx = ANY($1::int[])
                             OR ('x' || substr(encode(sha256(convert_to(l.id::text || ':' || l.live_id::text, 'UTF8')), 'hex'), 1, 8))::bit(32)::bigint % 10000 < $2)
                   THEN CASE WHEN l.u_report < 0.80 THEN 'installed' WHEN l.u_report < 0.82 THEN 'failed' WHEN l.u_report < 0.85 THEN 'offered'
                             WHEN l.u_report < 0.87 THEN 'downloading' WHEN l.u_report < 0.88 THEN 'downloaded' WHEN l.u_report < 0.89 THEN 'installing' END
              END AS live_state,
              CASE WHEN l.channel = 'early' AND l.board <> 'A' AND l.site_idx = ANY($3::int[])
                   THEN CASE WHEN l.u_report < 0.6 THEN 'installed' WHEN l.u_report < 0.7 THEN 'downloading' END END AS rc_state,
              CASE WHEN l.fw0 = '3.0.0-beta.1' THEN 'installed'
                   WHEN l.channel = 'early' AND l.board <> 'A' AND l.u_report > 0.95 THEN 'failed' END AS beta_state
         FROM bench_l3 l`,
      [plan0.r230.pilotSites, Math.round(plan0.r230.share * 100), plan0.rc1.pilotSites],
    );
    await db.query(
      `CREATE TEMP TABLE bench_l5 AS
       SELECT l.*,
              CASE WHEN l.live_state = 'installed' THEN '2.3.0' WHEN l.rc_state = 'installed' THEN '3.0.0-rc.1' ELSE l.fw0 END AS firmware,
              sqrt(-2 * ln(1 - l.u_g1)) * cos(2 * pi() * l.u_g2) AS gauss,
              CASE WHEN l.silent THEN ${nowLit} - interval '1 hour' - l.u_seen * interval '72 hours'
                   ELSE ${nowLit} - l.u_seen * interval '14 minutes' END AS last_seen_at,
              l.site_created + interval '1 day' + l.u_when * interval '2 days' AS enrolled_at
         FROM bench_l4 l;
       CREATE UNIQUE INDEX ON bench_l5 (id); ANALYZE bench_l5`,
    );
    const counterCase = `CASE l.firmware ${counters.map(([v, c]) => `WHEN '${v}' THEN ${c}`).join(' ')} ELSE 0 END`;
    const supplyCase = (part: 'nominalV' | 'spreadV') => `CASE l.board ${['A', 'B', 'C'].map((b) => `WHEN '${b}' THEN ${supply(b)[part]}`).join(' ')} END`;
    await db.query(
      `INSERT INTO loggers (id, serial, model_id, board, channel, status, token_digest, token_issued_at, site_id, enrolled_at, enrolled_by, install,
                            registered_by, firmware, supply_v, last_seen_at, created_at, updated_at, reported_board, security_counter, readings,
                            last_ip, rssi_dbm, free_heap_b, uptime_s, config_version, last_reset_reason, last_check_in_at, check_in_count, recent_resets)
       SELECT l.id, x.serial, ($1::uuid[])[l.model_no + 1], l.board, l.channel, 'enrolled',
              encode(sha256(convert_to('hlt_' || rtrim(translate(encode(sha256(convert_to('heliodor bench logger ' || x.serial, 'UTF8')), 'base64'), '+/', '-_'), '='), 'UTF8')), 'hex'),
              l.enrolled_at - interval '3 days', l.site_id, l.enrolled_at, l.integrator,
              jsonb_build_object('panelWp', 100, 'panelVocV', 22, 'notes', ''),
              $2::uuid, l.firmware,
              round(CAST(CASE WHEN l.low THEN 4.40 + 0.06 * l.gauss ELSE ${supplyCase('nominalV')} + ${supplyCase('spreadV')} * l.gauss END AS numeric), 3),
              l.last_seen_at, l.enrolled_at - interval '3 days', l.last_seen_at, l.board, ${counterCase},
              jsonb_build_object('bus_v', round(CAST(14 + 6 * l.u_temp AS numeric), 3), 'current_a', round(CAST(4 * l.u_when AS numeric), 4),
                                 'power_w', round(CAST((14 + 6 * l.u_temp) * 4 * l.u_when AS numeric), 3), 'energy_wh', round(CAST(300 * l.u_seen AS numeric), 2),
                                 'temp_c', CASE WHEN l.probe THEN 85 ELSE round(CAST(4 + 14 * l.u_temp AS numeric) * 16) / 16 END),
              '10.' || (l.site_idx / 250) % 256 || '.' || l.site_idx % 250 || '.' || (10 + l.g % 4),
              CAST(-52 - 30 * l.u_g2 AS int), 150000 + CAST(40000 * l.u_g1 AS int), CAST(3600 * 24 * 9 * l.u_when AS bigint), 1,
              CASE WHEN l.unstable THEN 'watchdog' WHEN l.board = 'A' THEN 'brownout' ELSE 'power_on' END,
              l.last_seen_at, CAST(extract(epoch FROM l.last_seen_at - l.enrolled_at) / 900 AS bigint) + 1,
              CASE WHEN l.unstable THEN ARRAY[${nowLit} - interval '2 hours', ${nowLit} - interval '7 hours', ${nowLit} - interval '13 hours', ${nowLit} - interval '20 hours']
                   WHEN l.board = 'A' AND l.u_probe > 0.9 THEN ARRAY[${nowLit} - make_interval(hours => CAST(230 * (l.u_probe - 0.9) AS int))]
                   ELSE CAST('{}' AS timestamptz[]) END
         FROM bench_l5 l
         CROSS JOIN LATERAL (SELECT CASE l.model_no WHEN 0 THEN 'FL2-' ELSE 'FL3-' END || lpad(CAST(l.g + 1 AS text), GREATEST(6, length(CAST(l.g + 1 AS text))), '0') AS serial) x`,
      [modelIds, people.Morgan],
    );
    step(`loggers (${n})`);

    const profile = measurementProfile(
      { shuntOhm: 0.005, maxCurrentA: 8, panelVocV: 22, tempResolutionBits: 12 },
      { busVMax: demoModel.busVMax, shuntFullScaleV: demoModel.shuntFullScaleV, tempResolutions: demoModel.tempResolutions },
    );
    if (!profile.ok) throw new Error('bench measurement profile refused');
    const p = profile.profile;
    await db.query(
      `INSERT INTO measurement_profiles (logger_id, version, panel_wp, panel_voc_v, shunt_ohm, max_current_a, current_lsb_a, calibration, power_lsb_w,
                                         bus_v_max, temp_resolution_bits, sample_interval_s, created_by, created_at)
       SELECT id, 1, 100, 22, $1, $2, $3, $4, $5, $6, $7, $8, integrator, enrolled_at FROM bench_l5`,
      [p.shuntOhm, p.maxCurrentA, p.currentLsbA, p.calibration, p.powerLsbW, p.busVMax, p.tempResolutionBits, p.sampleIntervalS],
    );
    step('measurement profiles');

    // ─── Install reports ─────────────────────────────────────────────────
    const reportSql = (stateCol: string, releaseCol: string, offeredFrom: string) =>
      `INSERT INTO install_reports (logger_id, release_id, state, reason, detail, offered_at, updated_at, finished_at, confirmed_at)
       SELECT l.id, l.${releaseCol}, l.${stateCol},
              CASE WHEN l.${stateCol} = 'failed' THEN (ARRAY['storage', 'connection', 'low_supply'])[1 + CAST(floor(l.u_when * 3) AS int)] END,
              CASE WHEN l.${stateCol} = 'failed' THEN 'Flash write verify failed' END,
              o.at, o.at + interval '25 minutes',
              CASE WHEN l.${stateCol} IN ('installed', 'failed') THEN o.at + interval '25 minutes' END,
              CASE WHEN l.${stateCol} = 'installed' THEN o.at + interval '40 minutes' END
         FROM bench_l5 l
         CROSS JOIN LATERAL (SELECT CAST('${offeredFrom}' AS timestamptz) + l.u_when * (${nowLit} - CAST('${offeredFrom}' AS timestamptz) - interval '1 hour') AS at) o
        WHERE l.${stateCol} IS NOT NULL`;
    let installReports = 0;
    installReports += (await db.query(reportSql('live_state', 'live_id', plan0.r230.pilotedAt!.toISOString()))).rowCount ?? 0;
    installReports += (await db.query(reportSql('rc_state', 'rc_id', plan0.rc1.pilotedAt!.toISOString()))).rowCount ?? 0;
    installReports += (await db.query(reportSql('beta_state', 'beta_id', plan0.beta1.pilotedAt!.toISOString()))).rowCount ?? 0;
    step(`install reports (${installReports})`);

    // ─── Check-in history ────────────────────────────────────────────────
    const today = utcDay(now).getTime();
    for (let d = -Math.ceil(HISTORY_HOURS / 24) - 4; d <= 7; d++) {
      const day = new Date(today + d * DAY);
      await db.query(
        `CREATE TABLE IF NOT EXISTS "${partitionName(day)}" PARTITION OF check_ins FOR VALUES FROM ('${day.toISOString()}') TO ('${new Date(day.getTime() + DAY).toISOString()}')`,
      );
    }
    const history = await db.query(
      `INSERT INTO check_ins (logger_id, at, firmware, board, security_counter, supply_v, readings, reset_reason, resets, rssi_dbm, free_heap_b, uptime_s, config_version, ip)
       SELECT l.id, l.last_seen_at - make_interval(hours => h), l.firmware, l.board, l.security_counter,
              round(CAST(l.supply_v + 0.04 * (pg_temp.bench_u(l.serial || ':' || h) - 0.5) AS numeric), 3),
              jsonb_build_object('temp_c', round(CAST(6 + 12 * pg_temp.bench_u(l.serial || ':t' || h) AS numeric) * 16) / 16, 'bus_v', 17.2),
              l.last_reset_reason, CAST('{}' AS jsonb), l.rssi_dbm, l.free_heap_b, GREATEST(0, l.uptime_s - h * 3600), 1, l.last_ip
         FROM loggers l JOIN bench_l5 b ON b.id = l.id
         CROSS JOIN generate_series(1, $1) AS h
        WHERE b.g % 20 = 0 OR b.has_token`,
      [HISTORY_HOURS],
    );
    step(`check-in history (${history.rowCount} rows)`);

    await db.query(
      `INSERT INTO activity (at, actor_type, actor_id, actor_name, action, target_type, target_id, summary)
       SELECT ${nowLit} - make_interval(mins => i * 37), 'person', $1, 'Priya', 'release.widened', 'release', $2, 'Priya widened FL-2 field logger 2.3.0 to 25 %'
         FROM generate_series(1, 200) AS i`,
      [people.Priya, plan0.r230.id],
    );
    await db.query('COMMIT');
    step('commit');

    await db.query('VACUUM ANALYZE');
    step('vacuum analyze');

    // Temp tables outlive the transaction (they belong to the session).
    const tokens = await db.query<{ id: string; serial: string; firmware: string; board: string; security_counter: number; live_report: string | null }>(
      `SELECT l.id, l.serial, l.firmware, l.board, l.security_counter,
              (SELECT ir.state FROM install_reports ir WHERE ir.logger_id = l.id AND ir.release_id = $1) AS live_report
         FROM loggers l JOIN bench_l5 b ON b.id = l.id WHERE b.has_token ORDER BY b.g`,
      [plan0.r230.id],
    );
    const tokenLoggers = tokens.rows.map((r) => ({
      id: r.id, serial: r.serial, token: benchToken(r.serial), firmware: r.firmware, board: r.board, securityCounter: Number(r.security_counter), liveReport: r.live_report,
    }));
    const counts = await db.query<{ loggers: number; sites: number; check_ins: number }>(
      'SELECT (SELECT count(*) FROM loggers)::int AS loggers, (SELECT count(*) FROM sites)::int AS sites, (SELECT count(*) FROM check_ins)::int AS check_ins',
    );
    const withHistory = await db.query<{ logger_id: string }>('SELECT logger_id FROM check_ins WHERE logger_id = ANY($1::uuid[]) LIMIT 1', [tokenLoggers.map((t) => t.id)]);
    return {
      loggers: counts.rows[0].loggers,
      sites: counts.rows[0].sites,
      checkIns: counts.rows[0].check_ins,
      installReports,
      liveReleaseId: plan0.r230.id,
      timelineLoggerId: withHistory.rows[0]?.logger_id ?? tokenLoggers[0].id,
      tokenLoggers,
      people: { support: demoEmail('Lena'), releaseEngineer: demoEmail('Priya') },
      seconds,
    };
  } catch (err) {
    await db.query('ROLLBACK').catch(() => undefined);
    throw err;
  } finally {
    await db.end();
  }
}
