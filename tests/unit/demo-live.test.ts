// The living demo's pure parts: the demo loggers' derived tokens and how each part of the fleet plan
// behaves live. Sources: SHA-256 (FIPS 180-4) and HMAC (RFC 2104, test vectors RFC 4231) as
// node:crypto computes them; base64url (RFC 4648 §5); the token form hlt_ + 43 characters
// (server/auth/tokens.ts, DEVICE_API.md); the power-on value of the temperature register, 0550h =
// 85 °C (DS18B20 data sheet, Table 1); the FL-2's 4.6 V update minimum (server/db/seed/scenario.ts);
// the trip's failure rule as the release page states it ("More than 5 % failed once 20 reports are
// in") and the device API's trip module defines it: failed ÷ finished above the trip point, strictly,
// over at least tripMinReports finished installs (connection and low-supply failures not counted).
import crypto from 'node:crypto';
import { demoLoggerToken } from '../../server/demo/tokens';
import fc from 'fast-check';
import { behaviourOf, guardedFailRate, PROBE_POWER_ON_C, TRIP_MARGIN } from '../../server/demo/live';
import { tokenPattern, digestToken } from '../../server/auth/tokens';
import { boardSupplies, SAG_V } from '../../scripts/simulator/readings';

describe('demo logger tokens', () => {
  const secret = 'demo secret of one data folder';

  test('when a token is derived, then it has the form of any logger token (hlt_ and 43 base64url characters, RFC 4648 §5)', () => {
    expect(demoLoggerToken(secret, 'FL2-02301')).toMatch(tokenPattern('hlt_'));
  });

  test('when the same serial is derived twice under one secret, then the token is the same (a restart finds it again), and another serial or secret gives another token', () => {
    const a = demoLoggerToken(secret, 'FL2-02301');
    expect(demoLoggerToken(secret, 'FL2-02301')).toBe(a);
    expect(demoLoggerToken(secret, 'FL2-02302')).not.toBe(a);
    expect(demoLoggerToken('another data folder', 'FL2-02301')).not.toBe(a);
  });

  test('when a token is derived, then it is HMAC-SHA256 of the labelled serial in base64url (RFC 2104), and its stored digest is its SHA-256 (FIPS 180-4)', () => {
    // RFC 4231 test case 2 first, so the HMAC below is the standard one.
    expect(crypto.createHmac('sha256', 'Jefe').update('what do ya want for nothing?').digest('hex')).toBe(
      '5bdcc146bf60754e6a042426089575c75a003f089d2739839dec58b964ec3843',
    );
    const token = demoLoggerToken(secret, 'FL2-02301');
    const mac = crypto.createHmac('sha256', secret).update('heliodor demo logger token\0FL2-02301').digest();
    expect(Buffer.from(token.slice(4), 'base64url')).toEqual(mac);
    expect(digestToken(token)).toBe(crypto.createHash('sha256').update(token).digest('hex'));
  });
});

describe('parts of the fleet plan, live', () => {
  const settings = { failRate: 0.02 };

  test('when a logger has no part, then it runs on its board\'s own supply with the demo\'s failure rate and ordinary download drops', () => {
    expect(behaviourOf([], 'B', settings)).toEqual({ runs: true, failRate: 0.02, interruptRate: 0.1 });
  });

  test('when a logger is silent by the scenario (the Westby mast\'s power cut), then it does not run', () => {
    expect(behaviourOf(['silent'], 'A', settings).runs).toBe(false);
    expect(behaviourOf(['silent', 'outside_share'], 'B', settings).runs).toBe(false);
  });

  test('when a logger\'s supply sags, then its nominal supply sits below the 4.6 V update minimum and the board\'s sag point', () => {
    const supply = behaviourOf(['low_supply'], 'B', settings).supply!;
    expect(supply.nominalV + 3 * supply.spreadV).toBeLessThan(4.6);
    expect(supply.nominalV).toBeLessThan(SAG_V);
  });

  test('when a board is unstable, then it browns out far more often than its revision does', () => {
    const supply = behaviourOf(['unstable'], 'A', settings).supply!;
    expect(supply.brownoutsPerHour).toBeGreaterThan(5 * boardSupplies.A.brownoutsPerHour);
    expect(supply.nominalV).toBe(boardSupplies.A.nominalV);
  });

  test('when the probe does not answer, then it keeps reading its power-on value of 85 °C (0550h, probe data sheet Table 1)', () => {
    expect(PROBE_POWER_ON_C).toBe(0x0550 / 16);
    expect(behaviourOf(['probe_fault'], 'B', settings).probeStuckC).toBe(85);
  });

  test('when a board has bad flash, then every install fails; when its link is weak, then half its download attempts drop', () => {
    expect(behaviourOf(['failed_storage'], 'C', settings).failRate).toBe(1);
    expect(behaviourOf(['straggler'], 'A', settings).failRate).toBe(1);
    expect(behaviourOf(['failed_connection'], 'B', settings).interruptRate).toBe(0.5);
    expect(behaviourOf(['stepping_stone'], 'B', settings)).toMatchObject({ failRate: 0.02, interruptRate: 0.5 });
  });
});

describe('the failure budget', () => {
  const trip = { tripFailureRatio: 0.05, tripMinReports: 20 };
  /** The trip's failure rule, written out here as the check. */
  const trips = (installed: number, failed: number, t = trip) => installed + failed >= t.tripMinReports && failed / (installed + failed) > t.tripFailureRatio;

  test('when one more failure would take the seeded 2.3.0 (29 installed, 1 failed) past 80 % of its 5 % trip point, then the demo injects none', () => {
    expect(guardedFailRate(0.02, { installed: 29, failed: 1, ...trip })).toBe(0);
  });

  test('when the release has room under its trip point, then installs fail at the demo\'s rate', () => {
    expect(guardedFailRate(0.02, { installed: 60, failed: 1, ...trip })).toBe(0.02);
  });

  test('when failures were reported since the figures were read, then they count against the room', () => {
    expect(guardedFailRate(0.02, { installed: 60, failed: 1, ...trip }, 1)).toBe(0);
  });

  test('when fewer installs than the minimum have finished, then the ratio is judged over the minimum, as the trip will judge it once reached', () => {
    expect(guardedFailRate(0.02, { installed: 5, failed: 0, ...trip })).toBe(0);
    expect(guardedFailRate(0.02, { installed: 0, failed: 0, tripFailureRatio: 0.2, tripMinReports: 10 })).toBe(0.02);
  });

  test('when someone raises the demo\'s rate to the trip point or beyond, or lowers the trip point below it, then nothing is held back', () => {
    expect(guardedFailRate(0.3, { installed: 29, failed: 1, ...trip })).toBe(0.3);
    expect(guardedFailRate(0.02, { installed: 29, failed: 1, tripFailureRatio: 0.01, tripMinReports: 20 })).toBe(0.02);
  });

  test('when the release is not known yet, then no failure is injected', () => {
    expect(guardedFailRate(0.02, undefined)).toBe(0);
  });

  test('when any release takes every failure the budget allows, then it never trips by the failure rule', () => {
    fc.assert(
      fc.property(fc.nat(300), fc.nat(20), fc.integer({ min: 1, max: 50 }), fc.integer({ min: 1, max: 50 }), fc.integer({ min: 1, max: 60 }), (installed, failed, ratioPct, minReports, more) => {
        const t = { tripFailureRatio: ratioPct / 100, tripMinReports: minReports };
        fc.pre(!trips(installed, failed, t) && failed / Math.max(installed + failed, minReports) <= TRIP_MARGIN * t.tripFailureRatio);
        const rate = t.tripFailureRatio / 2;
        let f = failed;
        let i = installed;
        for (let k = 0; k < more; k++) {
          // The worst case: every install the budget lets fail does fail; the others install.
          if (guardedFailRate(rate, { installed: i, failed: f, ...t }) > 0) f += 1;
          else i += 1;
          expect(trips(i, f, t)).toBe(false);
        }
      }),
    );
  });
});
