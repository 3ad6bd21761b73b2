// The device API's OpenAPI 3.1 document (DEVICE_API.md: "publishes it as OpenAPI 3.1 at
// /api/device/v1/openapi.json, generated from the same schemas that validate requests") and the
// check-in history partitions (DEVELOPERS.md: partitioned by day with a retention window).
import { QueryTypes } from 'sequelize';
import { startTestApp, type TestApp } from '../helpers/app';
import { bearer, checkInBody, createFleet } from './device-fixtures';
import { maintainCheckInPartitions, partitionName, utcDay } from '../../server/device-api/partitions';

let t: TestApp;
beforeAll(async () => {
  t = await startTestApp();
});
afterAll(() => t.close());

describe('OpenAPI document', () => {
  test('when anyone asks for it, then it is OpenAPI 3.1 with both endpoints, the bearer scheme and every contract field', async () => {
    const res = await t.request().get('/api/device/v1/openapi.json');
    expect(res.status).toBe(200);
    const doc = res.body;
    expect(doc.openapi).toBe('3.1.0');
    expect(Object.keys(doc.paths).sort()).toEqual(['/api/device/v1/check-in', '/api/device/v1/images/{sha256}']);
    expect(doc.components.securitySchemes.loggerToken).toMatchObject({ type: 'http', scheme: 'bearer' });
    const request = doc.components.schemas.CheckInRequest;
    // Field names and required set from DEVICE_API.md's request table.
    expect(Object.keys(request.properties).sort()).toEqual(
      ['board', 'config_version', 'firmware', 'free_heap_b', 'readings', 'report', 'reset_counts', 'reset_reason', 'resets_since_last', 'rssi_dbm', 'security_counter', 'supply_v', 'trust_version', 'uptime_s'].sort(),
    );
    expect(request.required.sort()).toEqual(['board', 'firmware', 'security_counter']);
    expect(request.properties.rssi_dbm).toMatchObject({ minimum: -120, maximum: 0 });
    expect(request.properties.supply_v).toMatchObject({ minimum: 0, maximum: 60 });
    expect(Object.keys(doc.components.schemas.CheckInResponse.properties).sort()).toEqual(['config', 'next_check_in_s', 'offer', 'server_time', 'trust_set']);
    expect(Object.keys(doc.components.schemas.Offer.properties).sort()).toEqual(['algorithm', 'image', 'key_id', 'manifest', 'release', 'security_counter', 'signature', 'signatures', 'version']);
    expect(Object.keys(doc.components.schemas.TrustSet.properties).sort()).toEqual(['expires', 'keys', 'model', 'signatures', 'threshold', 'version']);
    const images = doc.paths['/api/device/v1/images/{sha256}'].get.responses;
    expect(Object.keys(images).sort()).toEqual(['200', '206', '401', '404', '416', '503']);
    expect(doc.info.description).toContain('rolled back by the bootloader');
  });
});

describe('check-in history partitions', () => {
  test('when maintenance runs, then a week of daily partitions exists ahead, old days are dropped, and rows in the default partition move to their day', async () => {
    const fleet = await createFleet(t);
    const lg = await fleet.logger();
    await t.request().post('/api/device/v1/check-in').set(bearer(lg.token)).send(checkInBody('2.3.1')).expect(200);
    const far = new Date(Date.now() + 40 * 86_400_000);
    // A check-in far ahead of the partitions lands in the DEFAULT partition instead of failing.
    await t.sequelize.query(`INSERT INTO check_ins (logger_id, at, firmware, board, security_counter) VALUES (:id, :at, '2.3.1', 'B', 1)`, {
      replacements: { id: lg.id, at: far },
    });
    const inDefault = await t.sequelize.query<{ n: number }>('SELECT count(*)::int AS n FROM check_ins_default', { type: QueryTypes.SELECT });
    expect(inDefault[0].n).toBeGreaterThanOrEqual(1);

    // Run the maintenance as if it were that far day: its partition is created and the row moves in;
    // with a retention of 30 days, today's partitions are then older than the window and dropped.
    const report = await maintainCheckInPartitions(t.sequelize, far, 30);
    expect(report.created).toContain(partitionName(utcDay(far)));
    expect(report.movedFromDefault).toBeGreaterThanOrEqual(1);
    expect(report.dropped).toContain(partitionName(utcDay(new Date())));
    const names = (
      await t.sequelize.query<{ name: string }>(
        `SELECT c.relname AS name FROM pg_inherits i JOIN pg_class c ON c.oid = i.inhrelid JOIN pg_class p ON p.oid = i.inhparent WHERE p.relname = 'check_ins'`,
        { type: QueryTypes.SELECT },
      )
    ).map((r) => r.name);
    for (let i = 0; i <= 7; i++) expect(names).toContain(partitionName(utcDay(new Date(far.getTime() + i * 86_400_000))));
    const rows = await t.sequelize.query<{ n: number }>(`SELECT count(*)::int AS n FROM ${partitionName(utcDay(far))}`, { type: QueryTypes.SELECT });
    expect(rows[0].n).toBe(1);
  });
});
