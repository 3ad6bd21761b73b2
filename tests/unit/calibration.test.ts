import fc from 'fast-check';
import {
  ABOVE_RATING,
  calibrationFor,
  coldVoc,
  necVocFactor,
  probeStepChoice,
  probeStepText,
  convenientCurrentLsb,
  measurementProfile,
  minimumCurrentLsb,
  powerLsbFor,
  sampleIntervalFor,
  type InstallForProfile,
  type ModelLimits,
} from '../../lib/calibration';
import { installDetails, measurementProfile as measurementProfileSchema, registerLoggerRequest } from '../../schemas/loggers';

// Check values: INA226 data sheet SBOS547 (docs/SOURCES.md §8): shunt full scale 81.92 mV, bus range 0–36 V,
// Eq. 1 CAL = 0.00512 / (Current_LSB × R_SHUNT), Eq. 2 Current_LSB = max / 2^15, Eq. 3 Current = Shunt × CAL / 2048,
// Eq. 4 Power = Current × Bus / 20 000, Power_LSB = 25 × Current_LSB, Table 1 worked example,
// calibration register top bit unused (1 ≤ CAL ≤ 32767).
const chipLimits: ModelLimits = { busVMax: 36, shuntFullScaleV: 0.08192, tempResolutions: [9, 10, 11, 12] };

const install = (over: Partial<InstallForProfile> = {}): InstallForProfile => ({
  shuntOhm: 0.002,
  maxCurrentA: 15,
  panelVocV: 22.4,
  tempResolutionBits: 12,
  ...over,
});

function profileOf(over: Partial<InstallForProfile>, limits: ModelLimits = chipLimits) {
  const result = measurementProfile(install(over), limits);
  if (!result.ok) throw new Error(`expected a profile, got ${JSON.stringify(result.errors)}`);
  return result;
}

function errorsOf(over: Partial<InstallForProfile>, limits: ModelLimits = chipLimits) {
  const result = measurementProfile(install(over), limits);
  if (result.ok) throw new Error(`expected errors, got ${JSON.stringify(result.profile)}`);
  return result.errors;
}

// Source of this block: INA226 data sheet SBOS547, Table 1 and Eq. 1–4.
describe('the power-monitor datasheet worked example (Table 1)', () => {
  test('when R_SHUNT is 2 mΩ and the current LSB 1 mA, then the calibration register is 2560 = A00h (Eq. 1)', () => {
    const cal = calibrationFor(0.001, 0.002);
    expect(cal).toBe(2560);
    expect(cal).toBe(0xa00);
  });

  test('when the shunt register reads 1F40h (8000) with CAL = A00h, then the current register is 2710h (10000) = 10 A at 1 mA/bit (Eq. 3)', () => {
    const cal = calibrationFor(0.001, 0.002);
    const currentRegister = (0x1f40 * cal) / 2048;
    expect(currentRegister).toBe(10000);
    expect(currentRegister).toBe(0x2710);
    expect(currentRegister * 0.001).toBeCloseTo(10, 9);
    // Cross-check against the shunt itself: 8000 × 2.5 µV = 20 mV across 2 mΩ is 10 A (SBOS547 shunt LSB 2.5 µV).
    expect((0x1f40 * 2.5e-6) / 0.002).toBeCloseTo(10, 9);
  });

  test('when the bus reads 2570h (9584) and the current 10000, then power is 12B8h (4792) = 119.8 W at 25 mW/bit (Eq. 4, Power_LSB = 25 × Current_LSB)', () => {
    const powerLsb = powerLsbFor(0.001);
    expect(powerLsb).toBe(0.025);
    const powerRegister = (10000 * 0x2570) / 20000;
    expect(powerRegister).toBe(4792);
    expect(powerRegister).toBe(0x12b8);
    expect(powerRegister * powerLsb).toBeCloseTo(119.8, 9);
  });

  test('when the maximum expected current is 15 A, then Eq. 2 gives a minimum current LSB of 457.7 µA', () => {
    const minimum = minimumCurrentLsb(15) * 1e6;
    // The data sheet prints 457.7 µA (15 / 32768 = 457.76… µA, shown truncated).
    expect(minimum).toBeGreaterThanOrEqual(457.7);
    expect(minimum).toBeLessThan(457.8);
  });
});

describe('current LSB choice (Eq. 2 lower bound; the 1-2-5 rounding is our choice)', () => {
  test('when the maximum current is 15 A, then the LSB is rounded up from 457.7 µA to 500 µA', () => {
    expect(convenientCurrentLsb(15)).toBe(0.0005);
  });

  test('when max / 2^15 is itself a 1-2-5 value (32.768 A → 1 mA), then that value is kept, not the next one', () => {
    expect(convenientCurrentLsb(32.768)).toBe(0.001);
  });

  test('when any current from 1 mA to 100 A is expected, then the LSB is never below max / 2^15, is a 1-2-5 value and at most 2.5× the minimum', () => {
    fc.assert(
      fc.property(fc.double({ min: 0.001, max: 100, noNaN: true }), (maxCurrentA) => {
        const lsb = convenientCurrentLsb(maxCurrentA);
        const minimum = maxCurrentA / 2 ** 15;
        expect(lsb).toBeGreaterThanOrEqual(minimum);
        expect(lsb).toBeLessThanOrEqual(2.5 * minimum * (1 + 1e-12));
        expect(Number(lsb.toExponential(0))).toBe(lsb);
        expect(['1', '2', '5']).toContain(lsb.toExponential(0)[0]);
      }),
    );
  });

  test('when a profile is accepted, then its LSB is never below max / 2^15 and CAL, power LSB follow Eq. 1 and 25 × LSB', () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0.0001, max: 1, noNaN: true }),
        fc.double({ min: 0.01, max: 100, noNaN: true }),
        (shuntOhm, maxCurrentA) => {
          const result = measurementProfile(install({ shuntOhm, maxCurrentA }), chipLimits);
          if (!result.ok) return;
          const { profile } = result;
          expect(profile.currentLsbA).toBeGreaterThanOrEqual(maxCurrentA / 2 ** 15);
          expect(profile.calibration).toBeGreaterThanOrEqual(1);
          expect(profile.calibration).toBeLessThanOrEqual(32767);
          // Eq. 1 with floating point; the exact decimal result may differ by at most one count from binary rounding.
          expect(Math.abs(profile.calibration - 0.00512 / (profile.currentLsbA * shuntOhm))).toBeLessThan(1 + 1e-6);
          expect(profile.powerLsbW).toBeCloseTo(25 * profile.currentLsbA, 12);
          // The shunt register's top code: 7FFFh × 2.5 µV = 81.9175 mV (SBOS547: shunt LSB 2.5 µV, 16-bit two's complement).
          expect(maxCurrentA * shuntOhm).toBeLessThanOrEqual(0x7fff * 2.5e-6 * (1 + 1e-12));
        },
      ),
    );
  });
});

describe('measurement profile', () => {
  test('when an FL-2 install has a 5 mΩ shunt and 12.5 A, then the profile and the headroom "full scale 62.5 mV of 81.92 mV" come back', () => {
    const { profile, headroom } = profileOf({ shuntOhm: 0.005, maxCurrentA: 12.5, panelVocV: 22.4, tempResolutionBits: 12 });
    // 12.5 / 2^15 = 381.5 µA → 500 µA; CAL = trunc(0.00512 / (0.0005 × 0.005)) = 2048 (Eq. 1).
    expect(profile).toEqual({
      shuntOhm: 0.005,
      maxCurrentA: 12.5,
      currentLsbA: 0.0005,
      calibration: 2048,
      powerLsbW: 0.0125,
      busVMax: 36,
      tempResolutionBits: 12,
      sampleIntervalS: 3,
    });
    expect(headroom.shuntFullScaleV).toMatchObject({ used: 0.0625, limit: 0.08192 });
    expect(headroom.shuntFullScaleV.text).toBe('full scale 62.5 mV of 81.92 mV');
    expect(headroom.busV).toMatchObject({ used: 22.4, limit: 36 });
    expect(headroom.text).toContain('full scale 62.5 mV of 81.92 mV');
    // With a version added, the computed profile is what the shared schema accepts.
    expect(measurementProfileSchema.safeParse({ version: 1, ...profile }).success).toBe(true);
  });

  test('when the decimals are not exact in binary (5 µA × 40.96 mΩ), then CAL is the exact 25000, not 24999', () => {
    // 0.00512 / (0.000005 × 0.04096) is exactly 25000 (Eq. 1); IEEE 754 doubles give 24999.999999999996.
    const { profile } = profileOf({ shuntOhm: 0.04096, maxCurrentA: 0.1 });
    expect(profile.currentLsbA).toBe(0.000005);
    expect(profile.calibration).toBe(25000);
  });

  test('when the shunt voltage at full current is exactly 81.92 mV, then it is refused: the register tops out at 7FFFh = 81.9175 mV', () => {
    // SBOS547: shunt LSB 2.5 µV, 16-bit two's complement, so the largest code 7FFFh = 32767 × 2.5 µV = 81.9175 mV;
    // 81.92 mV itself (8000h) is not a positive value of the register. 40.96 A × 2 mΩ = 81.92 mV.
    const errors = errorsOf({ shuntOhm: 0.002, maxCurrentA: 40.96 });
    expect(errors).toHaveLength(1);
    expect(errors[0].path).toBe('shuntOhm');
    expect(errors[0].message).toContain('at most 81.9175 mV');
    // 32.767 A × 2.5 mΩ = 81.9175 mV exactly: the top code, accepted.
    expect(measurementProfile(install({ shuntOhm: 0.0025, maxCurrentA: 32.767 }), chipLimits).ok).toBe(true);
    // 32.7671 A × 2.5 mΩ = 81.91775 mV: above the top code by a quarter of a step, refused.
    expect(errorsOf({ shuntOhm: 0.0025, maxCurrentA: 32.7671 }).map((e) => e.path)).toEqual(['shuntOhm']);
  });

  test('when 20 A flows through 5 mΩ, then the message says 100 mV against the register\'s 81.9175 mV and what to change', () => {
    const [error] = errorsOf({ shuntOhm: 0.005, maxCurrentA: 20 });
    expect(error.message).toBe(
      'shunt voltage at 20 A would be 100 mV; the power-monitor chip measures at most 81.9175 mV (its register\'s top code, just under the 81.92 mV full scale) — use a smaller shunt or a lower maximum current',
    );
  });

  test('when CAL comes out at 32767, then it is accepted; at 32768 it is refused (the register top bit is unused)', () => {
    // 0.3 A → 0.3 / 2^15 = 9.16 µA → LSB 10 µA; CAL = trunc(0.00512 / (10 µA × R)) = trunc(512 / R).
    expect(profileOf({ shuntOhm: 0.0156254, maxCurrentA: 0.3 }).profile.calibration).toBe(32767);
    const errors = errorsOf({ shuntOhm: 0.015625, maxCurrentA: 0.3 });
    expect(errors).toEqual([{ path: 'maxCurrentA', message: expect.stringContaining('calibration would be 32768') }]);
    expect(errors[0].message).toContain('1 to 32767');
    expect(errors[0].message).toContain('larger shunt or a higher maximum current');
  });

  test('when CAL would be below 1, then it is refused', () => {
    // 100 A → LSB 5 mA; 0.00512 / (0.005 × 2 Ω) = 0.512 → 0.
    expect(calibrationFor(0.005, 2)).toBe(0);
    const errors = errorsOf({ shuntOhm: 2, maxCurrentA: 100 }, { ...chipLimits, shuntFullScaleV: 1000 });
    expect(errors).toEqual([{ path: 'maxCurrentA', message: expect.stringContaining('calibration would be 0') }]);
  });

  test('when the panel open-circuit voltage equals the 36 V bus limit, then it is accepted; above it is refused naming the limit', () => {
    // SBOS547: bus range 0–36 V ("Do not apply more than 36V").
    expect(measurementProfile(install({ panelVocV: 36 }), chipLimits).ok).toBe(true);
    const errors = errorsOf({ panelVocV: 44.6 });
    expect(errors).toHaveLength(1);
    expect(errors[0].path).toBe('panelVocV');
    expect(errors[0].message).toContain('44.6 V');
    expect(errors[0].message).toContain('36 V');
  });

  test('when the probe resolution is not one the model allows, then it is refused listing the allowed ones', () => {
    const limits = { ...chipLimits, tempResolutions: [11, 12] };
    const errors = errorsOf({ tempResolutionBits: 9 }, limits);
    expect(errors).toEqual([{ path: 'tempResolutionBits', message: expect.stringContaining('choose 11 or 12 bits') }]);
    // A model listing a resolution the probe family does not have (DS18B20 data sheet: 9 to 12 bits) still refuses it.
    expect(errorsOf({ tempResolutionBits: 13 }, { ...chipLimits, tempResolutions: [12, 13] })[0].path).toBe('tempResolutionBits');
  });

  test('when several limits are broken at once, then every one is reported, with the headroom still shown', () => {
    const result = measurementProfile(
      { shuntOhm: 0.005, maxCurrentA: 20, panelVocV: 48, tempResolutionBits: 10 },
      { ...chipLimits, tempResolutions: [12] },
    );
    expect(result.ok).toBe(false);
    if (result.ok) return;
    expect(result.errors.map((e) => e.path).sort()).toEqual(['panelVocV', 'shuntOhm', 'tempResolutionBits']);
    expect(result.headroom?.shuntFullScaleV.text).toBe('full scale 100 mV of 81.92 mV');
  });

  test('when a value is missing or not positive (the form is half typed), then that field is named and nothing throws', () => {
    const result = measurementProfile({ shuntOhm: 0, maxCurrentA: Number.NaN, panelVocV: -1, tempResolutionBits: 12 }, chipLimits);
    expect(result.ok).toBe(false);
    if (result.ok) return;
    expect(result.errors.map((e) => e.path).sort()).toEqual(['maxCurrentA', 'panelVocV', 'shuntOhm']);
    expect(result.headroom).toBeUndefined();
  });
});

// Source of the conversion times: DS18B20 data sheet, resolution table (docs/SOURCES.md §9).
describe('sample interval (from the temperature probe datasheet conversion times)', () => {
  test('when the probe resolution is 9, 10, 11 or 12 bits, then the interval is whole seconds, at least 1 s and at least 4× the conversion time', () => {
    // Max conversion time: 9-bit 93.75 ms, 10-bit 187.5 ms, 11-bit 375 ms, 12-bit 750 ms (docs/SOURCES.md §9).
    const conversionMs: Record<number, number> = { 9: 93.75, 10: 187.5, 11: 375, 12: 750 };
    for (const bits of [9, 10, 11, 12]) {
      const seconds = sampleIntervalFor(bits);
      expect(Number.isInteger(seconds)).toBe(true);
      expect(seconds).toBeGreaterThanOrEqual(1);
      expect(seconds * 1000).toBeGreaterThanOrEqual(4 * conversionMs[bits]);
      // and no longer than needed: one second less would break one of the rules
      expect(seconds === 1 || (seconds - 1) * 1000 < 4 * conversionMs[bits]).toBe(true);
    }
  });
});

describe('shared install and registration schemas', () => {
  const typical = { panelWp: 400, panelVocV: 22.4, shuntOhm: 0.002, maxCurrentA: 15, tempResolutionBits: 12 };

  test('when install details are typed, then the form schema takes the probe family\'s 9–12 bits and refuses zero or out-of-range values', () => {
    // Probe resolutions 9 to 12 bits: DS18B20 data sheet (docs/SOURCES.md §9).
    expect(installDetails.safeParse(typical).success).toBe(true);
    expect(installDetails.safeParse({ ...typical, tempResolutionBits: 9 }).success).toBe(true);
    expect(installDetails.safeParse({ ...typical, tempResolutionBits: 8 }).success).toBe(false);
    expect(installDetails.safeParse({ ...typical, tempResolutionBits: 13 }).success).toBe(false);
    expect(installDetails.safeParse({ ...typical, shuntOhm: 0 }).success).toBe(false);
    expect(installDetails.safeParse({ ...typical, notes: 'x'.repeat(501) }).success).toBe(false);
    // What the form accepts goes straight into the calibration.
    const parsed = installDetails.parse(typical);
    expect(measurementProfile(parsed, chipLimits).ok).toBe(true);
  });

  test('when a logger is registered without a channel, then it goes on the stable channel and its serial is trimmed', () => {
    const parsed = registerLoggerRequest.parse({ serial: ' FL2-AV-0001 ', modelId: '5b0e6f0a-2c1d-4e8f-9a3b-7c6d5e4f3a21', board: 'B' });
    expect(parsed).toEqual({ serial: 'FL2-AV-0001', modelId: '5b0e6f0a-2c1d-4e8f-9a3b-7c6d5e4f3a21', board: 'B', channel: 'stable' });
    expect(registerLoggerRequest.safeParse({ ...parsed, channel: 'beta' }).success).toBe(false);
    expect(registerLoggerRequest.safeParse({ ...parsed, serial: 'FL 2' }).success).toBe(false);
  });
});

// Open-circuit voltage in the cold: Voc,max = Voc,STC × (1 + β/100 × (Tmin − 25 °C)) (IEC 62548; NEC 2023
// 690.7(A)(1); docs/SOURCES.md §14), and NEC 2023 Table 690.7(A) when β is not known (factors from memory).
describe('open-circuit voltage in the cold', () => {
  test('when β and Tmin are given, then Voc,max follows the coefficient formula (worked by hand)', () => {
    // 22.0 × (1 + (−0.30/100) × (−10 − 25)) = 22.0 × (1 + 0.105) = 22.0 × 1.105 = 24.31 V.
    const cold = coldVoc(22.0, -0.3, -10);
    expect(cold).toMatchObject({ basis: 'coefficient', factor: 1.105, vocMaxV: 24.31 });
    // 22.0 × (1 + 0.003 × 40) = 22.0 × 1.12 = 24.64 V (docs/SOURCES.md §14 example, −15 °C).
    expect(coldVoc(22.0, -0.3, -15)).toMatchObject({ factor: 1.12, vocMaxV: 24.64 });
    // 40.0 × (1 + 0.0035 × 45) = 40.0 × 1.1575 = 46.3 V.
    expect(coldVoc(40.0, -0.35, -20)).toMatchObject({ factor: 1.1575, vocMaxV: 46.3 });
  });

  test('when the site is warmer than 25 °C, then the nameplate value is kept (never lowered)', () => {
    expect(coldVoc(22.0, -0.3, 30)).toMatchObject({ factor: 1, vocMaxV: 22 });
  });

  test('when β is unknown, then the NEC 2023 Table 690.7(A) factor applies at each band edge (from memory)', () => {
    // Table 690.7(A), crystalline silicon, lowest expected ambient in °C — values from memory (docs/SOURCES.md §14).
    const edges: [number, number][] = [
      [25, 1], [24, 1.02], [20, 1.02], [19, 1.04], [15, 1.04], [14, 1.06], [10, 1.06], [9, 1.08], [5, 1.08],
      [4, 1.1], [0, 1.1], [-1, 1.12], [-5, 1.12], [-6, 1.14], [-10, 1.14], [-11, 1.16], [-15, 1.16],
      [-16, 1.18], [-20, 1.18], [-21, 1.2], [-25, 1.2], [-26, 1.21], [-30, 1.21], [-31, 1.23], [-35, 1.23],
      [-36, 1.25], [-40, 1.25],
    ];
    for (const [tmin, factor] of edges) expect([tmin, necVocFactor(tmin)]).toEqual([tmin, factor]);
    // Between two bands' whole degrees the colder band's factor: the safe side.
    expect(necVocFactor(19.5)).toBe(1.04);
    expect(necVocFactor(-40.5)).toBeNull();
    // 22.0 V × 1.14 at −10 °C = 25.08 V.
    expect(coldVoc(22.0, null, -10)).toMatchObject({ basis: 'table', factor: 1.14, vocMaxV: 25.08 });
  });

  test('when the site temperature is unknown, then the nameplate only is checked and the note asks for it', () => {
    const cold = coldVoc(22.0, -0.3, null);
    expect(cold).toMatchObject({ basis: 'nameplate', factor: 1, vocMaxV: 22 });
    expect((cold as { note: string }).note).toContain("site's lowest expected temperature");
  });

  test('when the cold voltage is above the panel voltage limit, then the profile is refused on panelVocV with "do not connect"', () => {
    // 33.0 × (1 + 0.003 × 35) = 33.0 × 1.105 = 36.465 V > 36 V (SBOS547 bus range), though 33 V alone fits.
    expect(measurementProfile(install({ panelVocV: 33 }), chipLimits).ok).toBe(true);
    const errors = errorsOf({ panelVocV: 33, vocTempCoeffPctPerC: -0.3, siteMinTempC: -10 });
    expect(errors).toHaveLength(1);
    expect(errors[0].path).toBe('panelVocV');
    expect(errors[0].message).toContain(ABOVE_RATING);
    expect(errors[0].message).toContain('36.47 V');
    // 32.0 × 1.105 = 35.36 V stays under 36 V: accepted, and the note shows the figure.
    const ok = measurementProfile(install({ panelVocV: 32, vocTempCoeffPctPerC: -0.3, siteMinTempC: -10 }), chipLimits);
    expect(ok.ok && ok.coldVoc.vocMaxV).toBe(35.36);
  });

  test('when the probe resolution is shown, then it is in °C steps from the probe data sheet table', () => {
    // Probe data sheet resolution table (docs/SOURCES.md §9): 9 bits 0.5 °C … 12 bits 0.0625 °C.
    expect([9, 10, 11, 12].map(probeStepText)).toEqual(['0.5 °C steps', '0.25 °C steps', '0.125 °C steps', '0.0625 °C steps']);
  });

  test('when an installer chooses the probe resolution, then each choice reads as its °C step, not in bits', () => {
    // Probe data sheet resolution table (docs/SOURCES.md §9): 9, 10, 11, 12 bits give 0.5, 0.25, 0.125, 0.0625 °C.
    expect([9, 10, 11, 12].map(probeStepChoice)).toEqual(['0.5 °C', '0.25 °C', '0.125 °C', '0.0625 °C']);
  });
});
