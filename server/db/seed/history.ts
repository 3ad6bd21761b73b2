// Fourteen days of check-in history for the demo fleet, generated inside PostgreSQL (generate_series)
// so some 80 000 rows cost well under a second, then each logger's latest-state columns copied from
// its last check-in.
//
// - Light: the fleet simulator's clear-sky model (scripts/simulator/readings.ts, Sun position from
//   suncalc) evaluated per village and hour in JS, times a Vale-wide cloudiness that wanders from hour
//   to hour and a little per site; the panel at its maximum-power point as the simulator computes it.
// - Supply: the simulator's board behaviour (A ≈ 4.72 V and sagging, B ≈ 5.04 V, C ≈ 5.0 V) with
//   gaussian spread; resets as regular events at each board's rate (A a brown-out about every two days,
//   B every ~17 days, C a watchdog reset every ~40 days), none on versions whose notes say the radio stays
//   quiet through supply dips (2.3.0 and the 3.0 release candidate); a software reset when a logger
//   boots into a new version.
// - History is hourly (the live interval is 15 minutes); check_in_count estimates the live count.
import type { Sequelize, Transaction } from 'sequelize';
import { ambientTemperatureC, boardSupplies, clearSkyIrradiance, typicalPanel } from '../../../scripts/simulator/readings';
import { gaussian, type Random } from '../../../scripts/simulator/random';
import { partitionName, utcDay } from '../../device-api/partitions';
import { COUNTER_OF, DAY, HOUR, MINUTE, type FleetPlan } from './fleet-plan';
import { valeVillages } from './scenario';
import { SQL_WORDS } from '../sql-words';

export const HISTORY_DAYS = 14;
/** Versions on which the seeded history has no brown-out or watchdog resets (see the release notes). */
const QUIET_VERSIONS = ['2.3.0', '3.0.0-rc.1'];
/** Hours between regular resets per board, from the simulator's rates (1 / (brown-outs + watchdogs per hour)). */
function resetPeriodHours(board: string): { period: number; kind: 'brownout' | 'watchdog' } {
  const b = boardSupplies[board] ?? boardSupplies.B;
  const perHour = b.brownoutsPerHour + b.watchdogsPerHour;
  return { period: Math.max(6, Math.round(1 / perHour)), kind: b.brownoutsPerHour > b.watchdogsPerHour * 2 ? 'brownout' : 'watchdog' };
}

/** Creates the daily partitions the history falls into (the migration made only today and a week ahead). */
export async function ensureHistoryPartitions(sequelize: Sequelize, t: Transaction, now: Date) {
  const today = utcDay(now).getTime();
  for (let d = -(HISTORY_DAYS + 1); d <= 1; d++) {
    const day = new Date(today + d * DAY);
    const to = new Date(day.getTime() + DAY);
    await sequelize.query(
      `CREATE TABLE IF NOT EXISTS "${partitionName(day)}" PARTITION OF check_ins FOR VALUES FROM ('${day.toISOString()}') TO ('${to.toISOString()}')`,
      { transaction: t },
    );
  }
}

type PlanRow = {
  logger_id: string;
  village: number;
  board: string;
  wp: number;
  nominal: number;
  spread: number;
  low_since: string | null;
  reset_period: number;
  reset_phase: number;
  reset_kind: string;
  unstable: boolean;
  probe_fault: boolean;
  enrolled_at: string;
  first_at: string;
  last_at: string;
  fw_before: string;
  sc_before: number;
  fw_after: string | null;
  sc_after: number | null;
  upgraded_at: string | null;
  rssi_base: number;
  heap_base: number;
  cfg2_at: string | null;
  ip: string;
  clear_offset: number;
  check_in_count: number;
};

export async function seedCheckInHistory(sequelize: Sequelize, t: Transaction, plan: FleetPlan, random: Random) {
  const { now } = plan;
  const windowStart = now.getTime() - HISTORY_DAYS * DAY;
  const villageKeys = Object.keys(valeVillages);

  // Light and air temperature per village and hour (all sites of a village share the Sun).
  const firstHour = Math.floor(windowStart / HOUR) - 1;
  const lastHour = Math.floor(now.getTime() / HOUR) + 1;
  const cols = { village: [] as number[], h: [] as number[], irr: [] as number[], amb: [] as number[], clear: [] as number[] };
  let clearness = 0.6;
  const valeClear: number[] = [];
  for (let h = firstHour; h <= lastHour; h++) {
    // Cloud over the Vale: a mean-reverting walk from hour to hour.
    clearness = Math.min(1, Math.max(0.1, clearness + 0.25 * (0.65 - clearness) + gaussian(random, 0, 0.12)));
    valeClear.push(clearness);
  }
  const panel = typicalPanel(100);
  villageKeys.forEach((key, v) => {
    const spot = valeVillages[key];
    for (let h = firstHour; h <= lastHour; h++) {
      const at = new Date(h * HOUR + 30 * MINUTE);
      cols.village.push(v);
      cols.h.push(h);
      cols.irr.push(Number(clearSkyIrradiance(at, spot, panel).toFixed(2)));
      cols.amb.push(Number(ambientTemperatureC(at, spot).toFixed(2)));
      cols.clear.push(Number(valeClear[h - firstHour].toFixed(3)));
    }
  });

  const rows: PlanRow[] = [];
  for (const l of plan.loggers) {
    if (l.status === 'registered' || !l.lastAt || l.siteIndex === null) continue;
    const site = plan.sites[l.siteIndex];
    const first = Math.max(l.enrolledAt!.getTime(), windowStart);
    if (first > l.lastAt.getTime()) continue;
    const upgrade = [...l.installs].reverse().find((i) => i.finishedAt.getTime() > first && i.finishedAt.getTime() <= l.lastAt!.getTime());
    const before = upgrade ? (l.installs[l.installs.indexOf(upgrade) - 1]?.version ?? l.factory!) : l.firmware!;
    const supply = boardSupplies[l.board] ?? boardSupplies.B;
    const resets = resetPeriodHours(l.board);
    rows.push({
      logger_id: l.id,
      village: villageKeys.indexOf(site.village),
      board: l.board,
      wp: l.panelWp,
      nominal: supply.nominalV,
      spread: supply.spreadV,
      low_since: l.lowSupplySince?.toISOString() ?? null,
      reset_period: resets.period,
      reset_phase: Math.floor(random() * resets.period),
      reset_kind: resets.kind,
      unstable: l.roles.includes('unstable'),
      probe_fault: l.roles.includes('probe_fault'),
      enrolled_at: l.enrolledAt!.toISOString(),
      first_at: new Date(first).toISOString(),
      last_at: l.lastAt.toISOString(),
      fw_before: before,
      sc_before: COUNTER_OF[before] ?? 0,
      fw_after: upgrade?.version ?? null,
      sc_after: upgrade ? COUNTER_OF[upgrade.version] : null,
      upgraded_at: upgrade ? new Date(upgrade.finishedAt.getTime() + 4 * MINUTE).toISOString() : null,
      rssi_base: -52 - Math.round(random() * 30) - (l.roles.includes('stepping_stone') ? 18 : 0),
      heap_base: 150_000 + Math.round(random() * 40_000),
      cfg2_at: l.profileChangedAt ? new Date(l.profileChangedAt.getTime() + 12 * MINUTE).toISOString() : null,
      ip: `10.42.${site.index}.${10 + rows.filter((r) => r.village === villageKeys.indexOf(site.village)).length}`,
      clear_offset: Number(((random() - 0.5) * 0.12).toFixed(3)),
      check_in_count: Math.floor((l.lastAt.getTime() - l.enrolledAt!.getTime()) / (15 * MINUTE)) + 1,
    });
  }

  await sequelize.query(
    `CREATE TEMP TABLE seed_weather (village int, h bigint, irr float8, ambient float8, clear float8) ON COMMIT DROP;
     CREATE TEMP TABLE seed_plan (
       logger_id uuid, village int, board text, wp float8, nominal float8, spread float8, low_since timestamptz,
       reset_period int, reset_phase int, reset_kind text, unstable boolean, probe_fault boolean,
       enrolled_at timestamptz, first_at timestamptz, last_at timestamptz, fw_before text, sc_before int, fw_after text, sc_after int,
       upgraded_at timestamptz, rssi_base int, heap_base int, cfg2_at timestamptz, ip text, clear_offset float8, check_in_count bigint
     ) ON COMMIT DROP;`,
    { transaction: t },
  );
  await sequelize.query(
    `INSERT INTO seed_weather SELECT * FROM unnest(CAST(:village AS int[]), CAST(:h AS bigint[]), CAST(:irr AS float8[]), CAST(:amb AS float8[]), CAST(:clear AS float8[]))`,
    { transaction: t, replacements: { village: pgArray(cols.village), h: pgArray(cols.h), irr: pgArray(cols.irr), amb: pgArray(cols.amb), clear: pgArray(cols.clear) } },
  );
  await sequelize.query('INSERT INTO seed_plan SELECT * FROM json_populate_recordset(CAST(NULL AS seed_plan), CAST(:plan AS json))', {
    transaction: t,
    replacements: { plan: JSON.stringify(rows) },
  });
  // Without statistics the planner would scan the weather once per check-in row.
  await sequelize.query('CREATE INDEX ON seed_weather (village, h); ANALYZE seed_weather; ANALYZE seed_plan;', { transaction: t });
  // Room for the energy counter's window sort in memory, and no JIT compilation: for one query of this
  // size compiling costs more than it saves (this transaction only).
  await sequelize.query("SET LOCAL work_mem = '64MB'; SET LOCAL jit = off", { transaction: t });

  await sequelize.query(
    `INSERT INTO check_ins (logger_id, at, firmware, board, security_counter, supply_v, readings, reset_reason, resets, rssi_dbm, free_heap_b, uptime_s, config_version, ip)
     WITH base AS MATERIALIZED (
       SELECT p.*, s.at, w.irr * least(1, greatest(0.1, w.clear + p.clear_offset + 0.1 * (random() - 0.5))) AS light, w.ambient,
              (p.upgraded_at IS NOT NULL AND s.at >= p.upgraded_at) AS upgraded,
              sqrt(-2 * ln(1 - random())) * cos(2 * pi() * random()) AS g1,
              sqrt(-2 * ln(1 - random())) * cos(2 * pi() * random()) AS g2,
              CAST(floor(extract(epoch FROM s.at) / 3600) AS bigint) AS h
         FROM seed_plan p
         CROSS JOIN LATERAL generate_series(p.last_at, p.first_at, interval '-1 hour') AS s(at)
         JOIN seed_weather w ON w.village = p.village AND w.h = CAST(floor(extract(epoch FROM s.at) / 3600) AS bigint)
     ),
     ev AS (
       SELECT b.*,
              CASE WHEN b.upgraded THEN b.fw_after ELSE b.fw_before END AS fw,
              CASE WHEN b.upgraded THEN b.sc_after ELSE b.sc_before END AS sc,
              (CASE WHEN b.upgraded THEN b.fw_after ELSE b.fw_before END) = ANY(CAST(:quiet AS text[])) AS quiet,
              CAST((b.h + b.reset_phase) % (CASE WHEN b.unstable AND b.at > CAST(:now AS timestamptz) - interval '24 hours' THEN 5 ELSE b.reset_period END) AS int) AS since_reset_h,
              b.ambient + b.light * 25 / 800 AS cell
         FROM base b
     ),
     boot AS (
       SELECT e.*,
              (NOT e.quiet AND e.since_reset_h = 0) AS reset_now,
              (e.upgraded AND e.at < e.upgraded_at + interval '1 hour') AS upgrade_row,
              greatest(
                e.enrolled_at,
                CASE WHEN e.upgraded THEN e.upgraded_at END,
                CASE WHEN NOT e.quiet THEN e.at - make_interval(hours => e.since_reset_h) - interval '4 minutes' END
              ) AS boot_at,
              CASE WHEN e.light <= 0 THEN 0
                   ELSE least(22, greatest(0, 18 * (1 + 0.06 * ln(e.light / 1000)) * (1 - 0.0035 * (e.cell - 25)))) END AS bus_v
         FROM ev e
     ),
     power AS (
       SELECT o.*,
              CASE WHEN o.bus_v > 0 THEN o.wp / 18 * (o.light / 1000) * (1 + 0.0005 * (o.cell - 25)) ELSE 0 END AS current_a
         FROM boot o
     ),
     energy AS (
       SELECT q.*, q.bus_v * q.current_a AS power_w,
              sum(q.bus_v * q.current_a) OVER (PARTITION BY q.logger_id, q.boot_at ORDER BY q.at) AS energy_wh
         FROM power q
     )
     SELECT logger_id, at, fw, board, sc,
            round(CAST(CASE WHEN low_since IS NOT NULL AND at >= low_since THEN 4.44 + 0.03 * g1 ELSE nominal + spread * g1 END AS numeric), 3),
            jsonb_build_object(
              'bus_v', round(CAST(bus_v AS numeric), 3),
              'current_a', round(CAST(current_a AS numeric), 4),
              'power_w', round(CAST(power_w AS numeric), 3),
              'energy_wh', round(CAST(energy_wh AS numeric), 2),
              'temp_c', CASE WHEN probe_fault AND at > CAST(:now AS timestamptz) - interval '3 hours' THEN 85
                             ELSE round(CAST(cell AS numeric) * 16) / 16 END
            ),
            CASE WHEN boot_at = upgraded_at THEN :software WHEN boot_at = enrolled_at THEN :powerOn ELSE reset_kind END,
            CASE WHEN upgrade_row THEN jsonb_build_object(CAST(:software AS text), 1)
                 WHEN reset_now THEN jsonb_build_object(reset_kind, 1)
                 ELSE CAST('{}' AS jsonb) END,
            CAST(greatest(-120, least(0, rssi_base + round(2 * g2))) AS int),
            heap_base - CAST(random() * 4000 AS int),
            CAST(greatest(0, extract(epoch FROM at - boot_at)) AS bigint),
            CASE WHEN cfg2_at IS NOT NULL AND at >= cfg2_at THEN 2 ELSE 1 END,
            ip
       FROM energy`,
    { transaction: t, replacements: { ...SQL_WORDS, now: now.toISOString(), quiet: pgArray(QUIET_VERSIONS) } },
  );

  // Latest state on the logger rows, exactly as the last check-in left it.
  await sequelize.query(
    `UPDATE loggers l SET firmware = c.firmware, reported_board = c.board, security_counter = c.security_counter, supply_v = c.supply_v,
            readings = c.readings, last_ip = c.ip, rssi_dbm = c.rssi_dbm, free_heap_b = c.free_heap_b, uptime_s = c.uptime_s,
            config_version = c.config_version, last_reset_reason = c.reset_reason, last_check_in_at = c.at, last_seen_at = c.at,
            check_in_count = p.check_in_count
       FROM (SELECT DISTINCT ON (logger_id) * FROM check_ins WHERE logger_id IN (SELECT logger_id FROM seed_plan) ORDER BY logger_id, at DESC) c
       JOIN seed_plan p ON p.logger_id = c.logger_id
      WHERE l.id = c.logger_id`,
    { transaction: t },
  );
}

/** A PostgreSQL array literal for numbers or plain version strings (no quotes or commas inside). */
function pgArray(values: readonly (number | string)[]): string {
  return `{${values.join(',')}}`;
}
