import { getPosition, getTimes } from 'suncalc';
import {
  airMass,
  ambientTemperatureC,
  clearSkyIrradiance,
  PanelMeter,
  panelOutput,
  panelTemperatureC,
  supplyBetweenCheckIns,
  typicalPanel,
} from '../../scripts/simulator/readings';
import { seededRandom } from '../../scripts/simulator/random';

// The fleet simulator's readings for the demo scenario (PRODUCT.md: Aldmere Vale, about 52.14° N, 1.98° W).
// Reference for the Sun: the suncalc package (a maintained solar-position library). Other references
// are named beside each check.
const VALE = { latitude: 52.14, longitude: -1.98 };
const MINUTE = 60_000;
const panel = typicalPanel(100);

function minutesOf(day: string): Date[] {
  const start = new Date(`${day}T00:00:00Z`).getTime();
  return Array.from({ length: 24 * 60 }, (_, i) => new Date(start + i * MINUTE));
}

describe('simulated daylight on the panel', () => {
  describe.each(['2026-06-21', '2026-12-01', '2026-03-20'])('on %s in Aldmere Vale', (day) => {
    const minutes = minutesOf(day);

    test('when suncalc has the Sun below the horizon, then the panel gets no light and gives no power', () => {
      const night = minutes.filter((at) => getPosition(at, VALE.latitude, VALE.longitude).altitude <= 0);
      expect(night.length).toBeGreaterThan(0);
      for (const at of night) {
        const g = clearSkyIrradiance(at, VALE, panel);
        expect(g).toBe(0);
        expect(panelOutput(panel, g, 10)).toEqual({ busV: 0, currentA: 0, powerW: 0 });
      }
    });

    test('when the Sun is up, then there is light, and the clear-sky peak falls within 15 minutes of suncalc solar noon', () => {
      const up = minutes.filter((at) => getPosition(at, VALE.latitude, VALE.longitude).altitude > 0.5);
      for (const at of up) expect(clearSkyIrradiance(at, VALE, panel)).toBeGreaterThan(0);
      let best = minutes[0];
      for (const at of minutes) if (clearSkyIrradiance(at, VALE, panel) > clearSkyIrradiance(best, VALE, panel)) best = at;
      const noon = getTimes(new Date(`${day}T12:00:00Z`), VALE.latitude, VALE.longitude).solarNoon;
      expect(Math.abs(best.getTime() - noon.getTime())).toBeLessThanOrEqual(15 * MINUTE);
    });
  });

  test('when midsummer and midwinter noons are compared, then the summer Sun (higher per suncalc) gives more light', () => {
    const summer = getTimes(new Date('2026-06-21T12:00:00Z'), VALE.latitude, VALE.longitude).solarNoon;
    const winter = getTimes(new Date('2026-12-21T12:00:00Z'), VALE.latitude, VALE.longitude).solarNoon;
    expect(getPosition(summer, VALE.latitude, VALE.longitude).altitude).toBeGreaterThan(getPosition(winter, VALE.latitude, VALE.longitude).altitude);
    expect(clearSkyIrradiance(summer, VALE, panel)).toBeGreaterThan(clearSkyIrradiance(winter, VALE, panel));
  });

  test('when the clear-sky light at a midsummer noon is computed, then it lies between 800 and 1100 W/m² (one sun is 1000 W/m², the IEC 60904-3 reference irradiance)', () => {
    const noon = getTimes(new Date('2026-06-21T12:00:00Z'), VALE.latitude, VALE.longitude).solarNoon;
    const g = clearSkyIrradiance(noon, VALE, panel);
    expect(g).toBeGreaterThan(800);
    expect(g).toBeLessThan(1100);
  });

  test('when the Sun stands overhead, then the air mass is 1 (the definition of AM1, Kasten & Young 1989 give 1.000 at 90°)', () => {
    expect(airMass(90)).toBeCloseTo(1, 3);
    // Kasten & Young's formula gives about 2.0 at 30° altitude (1/sin 30° = 2 for a flat atmosphere).
    expect(airMass(30)).toBeCloseTo(1 / Math.sin(Math.PI / 6), 1);
  });
});

describe('simulated panel output', () => {
  test('when the panel has standard test conditions (1000 W/m², 25 °C cell), then it gives its rated peak power at its rated maximum-power voltage (definition of Wp)', () => {
    const out = panelOutput(panel, 1000, 25);
    expect(out.powerW).toBeCloseTo(panel.wattsPeak, 6);
    expect(out.busV).toBeCloseTo(panel.vmpV, 6);
    expect(out.powerW).toBeCloseTo(out.busV * out.currentA, 9);
  });

  test('when the cell warms up, then the voltage and power fall (crystalline silicon: negative voltage temperature coefficient, common practice)', () => {
    expect(panelOutput(panel, 1000, 50).busV).toBeLessThan(panelOutput(panel, 1000, 25).busV);
    expect(panelOutput(panel, 1000, 50).powerW).toBeLessThan(panelOutput(panel, 1000, 25).powerW);
  });

  test('when the light dims, then the voltage stays below the open-circuit voltage and the current falls in proportion', () => {
    const bright = panelOutput(panel, 800, 25);
    const dim = panelOutput(panel, 200, 25);
    expect(bright.busV).toBeLessThanOrEqual(panel.vocV);
    expect(dim.busV).toBeLessThan(bright.busV);
    expect(dim.currentA / bright.currentA).toBeCloseTo(200 / 800, 6);
  });

  test('when the Sun shines on the panel, then it runs warmer than the air, and at night it sits at air temperature (NOCT model: 45 °C at 800 W/m², 20 °C air)', () => {
    expect(panelTemperatureC(20, 800)).toBeCloseTo(45, 9);
    expect(panelTemperatureC(7, 0)).toBe(7);
  });

  test('when the air temperature is sampled over a year in the Vale, then it stays in a lowland-England range (−10 to 35 °C, from memory) and summer is warmer than winter', () => {
    const july = ambientTemperatureC(new Date('2026-07-15T14:00:00Z'), VALE);
    const january = ambientTemperatureC(new Date('2026-01-15T14:00:00Z'), VALE);
    expect(july).toBeGreaterThan(january);
    for (let d = 0; d < 365; d += 7) {
      for (const h of [3, 15]) {
        const t = ambientTemperatureC(new Date(Date.UTC(2026, 0, 1 + d, h)), VALE);
        expect(t).toBeGreaterThan(-10);
        expect(t).toBeLessThan(35);
      }
    }
  });
});

describe('a logger’s panel meter', () => {
  test('when a day passes, then the energy since boot never goes down and matches the trapezoid sum of the minute powers', () => {
    const start = new Date('2026-06-21T00:00:00Z');
    const meter = new PanelMeter({ panel, spot: VALE, random: seededRandom(7), at: start, clearness: 1 });
    let previous = 0;
    let expected = 0;
    let lastPower = meter.sample(start).powerW;
    for (let i = 1; i <= 24 * 60; i++) {
      const at = new Date(start.getTime() + i * MINUTE);
      meter.advance(at, true);
      const power = meter.sample(at).powerW;
      expected += ((lastPower + power) / 2) / 60;
      lastPower = power;
      expect(meter.energySinceBootWh).toBeGreaterThanOrEqual(previous);
      previous = meter.energySinceBootWh;
    }
    expect(meter.energySinceBootWh).toBeCloseTo(expected, 6);
    // A 100 Wp panel gives well under 24 h × 100 W in a day.
    expect(meter.energySinceBootWh).toBeGreaterThan(0);
    expect(meter.energySinceBootWh).toBeLessThan(24 * panel.wattsPeak);
  });

  test('when the logger reboots, then energy since boot starts again from zero', () => {
    const start = new Date('2026-06-21T10:00:00Z');
    const meter = new PanelMeter({ panel, spot: VALE, random: seededRandom(1), at: start });
    meter.advance(new Date(start.getTime() + 60 * MINUTE));
    expect(meter.energySinceBootWh).toBeGreaterThan(0);
    meter.reboot();
    expect(meter.readings(null).energy_wh).toBe(0);
  });

  test('when the logger has a measurement profile, then readings are in its steps and power is bus voltage × current to one power step', () => {
    const start = new Date('2026-06-21T11:00:00Z');
    const meter = new PanelMeter({ panel, spot: VALE, random: seededRandom(3), at: start, clearness: 0.9 });
    // Steps of the power-monitor's registers (INA226 data sheet SBOS547: bus LSB 1.25 mV; power LSB = 25 × current LSB)
    // and the probe's 12-bit resolution (DS18B20 data sheet: 0.0625 °C).
    const profile = { max_current_a: 8, current_lsb_a: 0.00025, power_lsb_w: 0.00625, bus_v_max: 36, temp_resolution_bits: 12 };
    const r = meter.readings(profile);
    expect(r.bus_v).toBeGreaterThan(0);
    expect(Math.abs(r.bus_v / 0.00125 - Math.round(r.bus_v / 0.00125))).toBeLessThan(1e-6);
    expect(Math.abs(r.current_a / 0.00025 - Math.round(r.current_a / 0.00025))).toBeLessThan(1e-6);
    expect(Math.abs(r.temp_c / 0.0625 - Math.round(r.temp_c / 0.0625))).toBeLessThan(1e-6);
    expect(Math.abs(r.power_w - r.bus_v * r.current_a)).toBeLessThanOrEqual(0.00625 / 2 + 1e-9);
  });
});

describe('board supply', () => {
  test('when many check-in hours are simulated, then board A (no bulk capacitors) browns out more often than boards B and C, and supplies sit near 5 V', () => {
    const random = seededRandom(42);
    const brownouts: Record<string, number> = { A: 0, B: 0, C: 0 };
    let lowest = Infinity;
    let highest = -Infinity;
    for (const board of ['A', 'B', 'C']) {
      for (let i = 0; i < 20_000; i++) {
        const { supplyV, resets } = supplyBetweenCheckIns(board, 0.25, random);
        lowest = Math.min(lowest, supplyV);
        highest = Math.max(highest, supplyV);
        brownouts[board] += resets.brownout ?? 0;
      }
    }
    // USB supply: 5 V ± 5 % (USB 2.0 specification, 4.75–5.25 V), with board A sagging a little below it.
    expect(lowest).toBeGreaterThan(4.2);
    expect(highest).toBeLessThan(5.4);
    expect(brownouts.A).toBeGreaterThan(brownouts.B);
    expect(brownouts.A).toBeGreaterThan(brownouts.C);
  });
});
