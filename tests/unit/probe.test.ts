import { decodeProbeRaw, probeReadingFault } from '../../lib/calibration';

// Source: DS18B20 data sheet, Table 1 "Temperature/Data Relationship" (docs/SOURCES.md §9).
const table1: Array<[number, number]> = [
  [0x07d0, 125],
  [0x0550, 85],
  [0x0191, 25.0625],
  [0x00a2, 10.125],
  [0x0008, 0.5],
  [0x0000, 0],
  [0xfff8, -0.5],
  [0xff5e, -10.125],
  [0xfe6f, -25.0625], // the old Dallas edition misprints this as FF6Fh (docs/SOURCES.md §9)
  [0xfc90, -55],
];

describe('temperature probe readings', () => {
  const rows = table1.map(([raw, celsius]) => [`${raw.toString(16).toUpperCase().padStart(4, '0')}h`, celsius, raw] as const);
  // DS18B20 data sheet, Table 1 (12-bit resolution, the power-on default).
  test.each(rows)('when the temperature register reads %s at 12 bits, then it decodes to %s °C (probe data sheet, Table 1)', (_hex, celsius, raw) => {
    expect(decodeProbeRaw(raw, 12).tempC).toBe(celsius);
  });

  // DS18B20 data sheet, resolution notes: "bit 0 is undefined" at 11 bits, bits 1 and 0 at 10 bits, bits 2, 1
  // and 0 at 9 bits (docs/SOURCES.md §9); the steps are 0.125, 0.25 and 0.5 °C. 0197h carries 25.4375 °C at 12 bits
  // (0191h = 25.0625 °C, Table 1, plus 6 counts of 1/16 °C); with its undefined bits cleared it reads
  // 0196h = 25.375 °C at 11 bits, 0194h = 25.25 °C at 10 bits and 0190h = 25.0 °C at 9 bits.
  test.each([
    [12, 0x0197, 25.4375],
    [11, 0x0197, 25.375],
    [10, 0x0197, 25.25],
    [9, 0x0197, 25],
    // Negative values, two's complement: FF5Eh = −10.125 °C (Table 1); at 9 bits FF58h = −10.5 °C, at 10 bits FF5Ch = −10.25 °C.
    [9, 0xff5e, -10.5],
    [10, 0xff5e, -10.25],
    [11, 0xff5e, -10.125],
  ] as const)('when the probe runs at %i bits and the register reads %i, then the undefined low bits are ignored: %s °C (probe data sheet, resolution notes)', (bits, raw, celsius) => {
    expect(decodeProbeRaw(raw, bits)).toEqual({ tempC: celsius, fault: null });
  });

  test.each([9, 10, 11, 12] as const)('when the probe runs at %i bits, then every reading is a whole number of its step (0.5, 0.25, 0.125, 0.0625 °C)', (bits) => {
    const step = 2 ** (bits - 12) * 16; // steps per °C: 2, 4, 8, 16
    for (let raw = 0; raw < 0xffff; raw += 37) {
      const { tempC } = decodeProbeRaw(raw, bits);
      expect(Number.isInteger((tempC as number) * step)).toBe(true);
    }
  });

  test.each([9, 10, 11, 12] as const)('when the register reads FFFFh at %i bits (an open 1-Wire bus: nothing drives it low), then there is no temperature and the fault is open_bus', (bits) => {
    // docs/SOURCES.md §9 [D]: an open bus reads FFFFh, which as a number would be −0.0625 °C (a plausible value, hence the flag).
    expect(decodeProbeRaw(0xffff, bits)).toEqual({ tempC: null, fault: 'open_bus' });
    // FFFEh is a real reading at 12 bits (−0.125 °C), not the open bus.
    expect(decodeProbeRaw(0xfffe, 12)).toEqual({ tempC: -0.125, fault: null });
  });

  test('when a value does not fit the 16-bit register or the resolution is not 9–12 bits, then decoding refuses it', () => {
    expect(() => decodeProbeRaw(0x10000, 12)).toThrow(RangeError);
    expect(() => decodeProbeRaw(-1, 12)).toThrow(RangeError);
    expect(() => decodeProbeRaw(1.5, 12)).toThrow(RangeError);
    expect(() => decodeProbeRaw(0x0190, 8 as never)).toThrow(RangeError);
  });

  // DS18B20 data sheet, Table 1 footnote: "The power-on reset value of the temperature register is +85°C."
  test('when a reading is exactly +85 °C, then it is flagged as the power-on value (probe data sheet, Table 1 footnote)', () => {
    expect(decodeProbeRaw(0x0550, 12).fault).toBe('power_on_value');
    // One count either side is a real temperature.
    expect(decodeProbeRaw(0x0551, 12).fault).toBeNull();
    expect(decodeProbeRaw(0x054f, 12).fault).toBeNull();
    // At 9 bits 0551h's undefined bits clear to 0550h: the power-on value again.
    expect(decodeProbeRaw(0x0551, 9).fault).toBe('power_on_value');
  });

  // DS18B20 data sheet: measuring range −55 °C to +125 °C.
  test('when a reading is outside −55…+125 °C, then it is flagged out of range; the limits themselves are valid (probe data sheet)', () => {
    expect(decodeProbeRaw(0xfc90, 12).fault).toBeNull(); // −55 °C
    expect(decodeProbeRaw(0x07d0, 12).fault).toBeNull(); // +125 °C
    expect(decodeProbeRaw(0xfc8f, 12).fault).toBe('out_of_range'); // −55.0625 °C
    expect(decodeProbeRaw(0x07d1, 12).fault).toBe('out_of_range'); // +125.0625 °C
    // A sentinel some probe libraries return for a missing probe (from memory, docs/SOURCES.md §9 [M]).
    expect(probeReadingFault(-127)).toBe('out_of_range');
    expect(probeReadingFault(Number.NaN)).toBe('out_of_range');
  });

  test('when readings are ordinary panel temperatures, then nothing is flagged', () => {
    for (const raw of [0x0191, 0x00a2, 0x0008, 0x0000, 0xfff8, 0xff5e, 0xfe6f]) {
      expect(decodeProbeRaw(raw, 12).fault).toBeNull();
    }
  });
});
