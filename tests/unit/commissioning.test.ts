// The first-readings check (lib/commissioning.ts) against the data sheets' values and equations.
import {
  BUS_LSB_V,
  commissioningCheck,
  commissioningFigures,
  commissioningRules,
  FIRST_READINGS_COUNTED,
  firstReadingOf,
  PROBE_DISCONNECTED_C,
  type CommissioningFigures,
  type FirstReading,
} from '../../lib/commissioning';
import { COMMISSIONING_ITEMS } from '../../schemas/words';

// Power-monitor data sheet SBOS547, Table 1 (docs/SOURCES.md §8 [S]): Current_LSB 1 mA, Power_LSB = 25 × 1 mA = 25 mW.
// Panel: Voc,STC 22.0 V, β −0.30 %/°C, Tmin −15 °C → Voc,max = 22.0 × (1 + 0.003 × 40) = 24.64 V (docs/SOURCES.md §14 [D]).
const figures = commissioningFigures({ version: 1, currentLsbA: 0.001, powerLsbW: 0.025 }, { panelVocV: 22.0, vocTempCoeffPctPerC: -0.3 }, -15) as CommissioningFigures;

// Power-monitor data sheet SBOS547, Table 1 [S]: bus 2570h = 11.98 V, current 2710h = 10 A, power 12B8h = 119.8 W;
// the probe at +25.0625 °C (temperature-probe data sheet, Table 1 row 0191h, docs/SOURCES.md §9 [S]).
const good: FirstReading = { at: '2026-06-01T10:00:00.000Z', busV: 11.98, currentA: 10, powerW: 119.8, tempC: 25.0625 };
const three = (r: Partial<FirstReading> = {}, which = 0) => [0, 1, 2].map((i) => (i === which ? { ...good, ...r } : good));
const item = (readings: FirstReading[], name: (typeof COMMISSIONING_ITEMS)[number], f: CommissioningFigures = figures) =>
  commissioningCheck(f, readings).items.find((i) => i.item === name)!;

describe('the figures', () => {
  test('when the panel coefficient and the site temperature are known, then Voc,max is Voc,STC × (1 + β × (Tmin − 25 °C)) (docs/SOURCES.md §14 [D]: 24.64 V)', () => {
    expect(figures).toMatchObject({ profileVersion: 1, vocMaxV: 24.64, vocBasis: 'coefficient', currentLsbA: 0.001, powerLsbW: 0.025, siteMinTempC: -15 });
    // Bus voltage LSB 1.25 mV (power-monitor data sheet SBOS547, docs/SOURCES.md §8 [S]).
    expect(figures.busLsbV).toBe(0.00125);
    expect(BUS_LSB_V).toBe(0.00125);
  });

  test('when the site has no lowest temperature, then the nameplate Voc is the bound (docs/SOURCES.md §14)', () => {
    const f = commissioningFigures({ version: 2, currentLsbA: 0.0005, powerLsbW: 0.0125 }, { panelVocV: 22.4, vocTempCoeffPctPerC: null }, null) as CommissioningFigures;
    expect(f).toMatchObject({ vocMaxV: 22.4, vocBasis: 'nameplate', profileVersion: 2 });
  });

  test('when the site is colder than the code table without a coefficient, then there are no figures but the reason (NEC table ends at −40 °C, docs/SOURCES.md §14, from memory)', () => {
    expect(commissioningFigures({ version: 1, currentLsbA: 0.001, powerLsbW: 0.025 }, { panelVocV: 22, vocTempCoeffPctPerC: null }, -45)).toHaveProperty('error');
  });
});

describe('which readings count', () => {
  test(`when no readings have come, then the check waits for ${FIRST_READINGS_COUNTED}`, () => {
    expect(commissioningCheck(figures, [])).toMatchObject({ state: 'waiting', counted: 0, needed: 3 });
  });

  test('when two good readings have come, then the check still waits (our choice: three check-ins)', () => {
    expect(commissioningCheck(figures, [good, good])).toMatchObject({ state: 'waiting', counted: 2 });
  });

  test('when three good readings have come — the data sheet Table 1 values — then "passed" with every item ok (SBOS547 Table 1: 11.98 V × 10 A = 119.8 W)', () => {
    const verdict = commissioningCheck(figures, three());
    expect(verdict.state).toBe('passed');
    expect(verdict.counted).toBe(3);
    expect(verdict.items.map((i) => i.item)).toEqual([...COMMISSIONING_ITEMS]);
    expect(verdict.items.every((i) => i.ok && i.failures.length === 0 && i.lookAt === null)).toBe(true);
  });

  test('when a fourth reading is bad, then it does not count: only the first three are judged', () => {
    expect(commissioningCheck(figures, [...three(), { ...good, currentA: -10, powerW: -119.8 }]).state).toBe('passed');
  });

  test('when the first reading already fails, then the check fails at once without waiting for the others', () => {
    const verdict = commissioningCheck(figures, [{ ...good, currentA: -10, powerW: -119.8 }]);
    expect(verdict).toMatchObject({ state: 'failed', counted: 1 });
  });

  test('when a check-in\'s readings object lacks values, then they read as null (DEVICE_API.md: every reading optional)', () => {
    expect(firstReadingOf('2026-06-01T10:00:00.000Z', { bus_v: 18.4, temp_c: 24.5 })).toEqual({ at: '2026-06-01T10:00:00.000Z', busV: 18.4, currentA: null, powerW: null, tempC: 24.5 });
  });
});

describe('panel voltage: 0 V to Voc,max (NEC 2023 690.7(A), docs/SOURCES.md §14)', () => {
  test('when the bus reads exactly Voc,max 24.64 V, then it passes (the bound is inclusive)', () => {
    expect(item(three({ busV: 24.64, currentA: 0, powerW: 0 }), 'bus_voltage').ok).toBe(true);
  });

  test('when the bus reads one bus step (1.25 mV, SBOS547) above Voc,max, then it fails and says what to look at', () => {
    const result = item(three({ busV: 24.64125, currentA: 0, powerW: 0 }, 1), 'bus_voltage');
    expect(result.ok).toBe(false);
    expect(result.failures).toEqual([{ reading: 2, found: '24.64 V', why: "above 24.64 V, the most this panel gives at the site's lowest temperature" }]);
    expect(result.lookAt).toMatch(/one panel entered at enrollment/);
  });

  test('when the bus reads 0 V (night), then it passes; below 0 V, it fails', () => {
    expect(item(three({ busV: 0, currentA: 0, powerW: 0 }), 'bus_voltage').ok).toBe(true);
    expect(item(three({ busV: -0.00125, currentA: 0, powerW: 0 }), 'bus_voltage').failures[0].why).toBe('below 0 V');
  });

  test('when the bus voltage is not reported, then the item fails as not reported', () => {
    expect(item(three({ busV: null }), 'bus_voltage').failures[0]).toMatchObject({ found: 'not reported' });
  });
});

describe('current direction: a negative current means the shunt is reversed (common practice)', () => {
  test('when the current is 0 A, or exactly one current step below (−1 mA, our allowance for the chip offset at night), then it passes', () => {
    expect(item(three({ currentA: 0, powerW: 0 }), 'current').ok).toBe(true);
    expect(item(three({ currentA: -0.001, powerW: 0 }), 'current').ok).toBe(true);
  });

  test('when the current is just over one step negative, then it fails: the shunt is wired the wrong way round', () => {
    const result = item(three({ currentA: -0.0011, powerW: 0 }), 'current');
    expect(result.ok).toBe(false);
    expect(result.failures[0]).toEqual({ reading: 1, found: '−1.1 mA', why: 'negative: the current flows backwards through the shunt' });
    expect(result.lookAt).toMatch(/Isolate the array first, then swap the two leads at the shunt/);
  });

  test('when the full Table 1 current comes negative (−10 A, SBOS547 two\'s complement), then the verdict is "failed" on the current', () => {
    const verdict = commissioningCheck(figures, three({ currentA: -10, powerW: -119.8 }));
    expect(verdict.state).toBe('failed');
    expect(verdict.items.filter((i) => !i.ok).map((i) => i.item)).toEqual(['current']);
  });

  test('when the current is not reported, then the item fails as not reported', () => {
    expect(item(three({ currentA: null }), 'current').failures[0].found).toBe('not reported');
  });
});

describe('temperature probe (temperature-probe data sheet, docs/SOURCES.md §9)', () => {
  test('when the probe reads +85 °C, its power-on reset value (data sheet Table 1 footnote [S]), then it fails', () => {
    const result = item(three({ tempC: 85 }), 'probe');
    expect(result.failures[0]).toEqual({ reading: 1, found: '+85 °C', why: "the temperature probe's power-on value: no measurement was made" });
    expect(result.lookAt).toMatch(/plug and its three wires/);
  });

  test('when the probe reads one 12-bit step either side of +85 °C (84.9375, 85.0625 °C), then it passes: an ordinary temperature (§9 [S])', () => {
    expect(item(three({ tempC: 84.9375 }), 'probe').ok).toBe(true);
    expect(item(three({ tempC: 85.0625 }), 'probe').ok).toBe(true);
  });

  test('when the probe reads −127 °C, the disconnected code some probe libraries report (§9, from memory), then it fails as not answering', () => {
    expect(PROBE_DISCONNECTED_C).toBe(-127);
    expect(item(three({ tempC: -127 }), 'probe').failures[0].why).toBe('the temperature probe did not answer');
  });

  test('when the probe reads the ends of its rated range, −55 °C and +125 °C (§9 [S]), then it passes; one step beyond, it fails', () => {
    expect(item(three({ tempC: -55 }), 'probe').ok).toBe(true);
    expect(item(three({ tempC: 125 }), 'probe').ok).toBe(true);
    expect(item(three({ tempC: -55.0625 }), 'probe').failures[0].why).toBe("outside the temperature probe's range");
    expect(item(three({ tempC: 125.0625 }), 'probe').failures[0].why).toBe("outside the temperature probe's range");
  });

  test('when no temperature is reported, then the probe item fails as not reported', () => {
    expect(item(three({ tempC: null }), 'probe').failures[0].found).toBe('not reported');
  });
});

describe('power = voltage × current within the steps (SBOS547 Eq. 4 and Power_LSB = 25 × Current_LSB, §8)', () => {
  // Allowed difference [D]: one power step + one current step at the bus voltage + one bus step at the current:
  // 0.025 W + 20 V × 0.001 A + 2 A × 0.00125 V = 0.0475 W at 20 V and 2 A.
  const at = (powerW: number) => item(three({ busV: 20, currentA: 2, powerW }), 'power');

  test('when power is exactly V × I (20 V × 2 A = 40 W), then it passes', () => {
    expect(at(40).ok).toBe(true);
  });

  test('when power is off by exactly the allowed 47.5 mW either way, then it passes (inclusive bound)', () => {
    expect(at(40.0475).ok).toBe(true);
    expect(at(39.9525).ok).toBe(true);
  });

  test('when power is off by 0.1 mW more than allowed, then it fails and names both figures', () => {
    const result = at(40.0476);
    expect(result.ok).toBe(false);
    expect(result.failures[0]).toEqual({ reading: 1, found: '40.0476 W against 40 W', why: '47.6 mW apart; at most 47.5 mW is explained by the measurement steps' });
    expect(result.lookAt).toMatch(/may not run the measurement profile/);
  });

  test('when the chip truncates power to its step (Table 1: 4792 × 25 mW = 119.8 W for 11.98 V × 10 A), then it passes', () => {
    expect(item(three(), 'power').ok).toBe(true);
  });

  test('when power, or the voltage or current it is compared with, is missing, then the power item fails', () => {
    expect(item(three({ powerW: null }), 'power').failures[0].found).toBe('not reported');
    expect(item(three({ currentA: null }), 'power').failures[0].why).toBe('cannot be compared: voltage or current not reported');
  });
});

describe('the verdict as a whole', () => {
  test('when several items fail on different readings, then each names its readings, in the items\' order', () => {
    const verdict = commissioningCheck(figures, [good, { ...good, tempC: 85 }, { ...good, busV: 30, powerW: 300 }]);
    expect(verdict.state).toBe('failed');
    const failed = verdict.items.filter((i) => !i.ok).map((i) => [i.item, i.failures.map((f) => f.reading)]);
    expect(failed).toEqual([
      ['bus_voltage', [3]],
      ['probe', [2]],
    ]);
  });

  test('when the rules are asked for, then each item has its rule in figures', () => {
    expect(commissioningRules(figures)).toEqual({
      bus_voltage: '0 V to 24.64 V',
      current: 'not below −1 mA (one current step)',
      probe: '−55 °C to +125 °C, not exactly +85 °C or −127 °C',
      power: 'power within one step of voltage × current',
    });
  });
});
