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
  // DS18B20 data sheet, Table 1.
  test.each(rows)('when the temperature register reads %s, then it decodes to %s °C (probe datasheet, Table 1)', (_hex, celsius, raw) => {
    expect(decodeProbeRaw(raw)).toBe(celsius);
  });

  test('when the register reads FFFFh (an open 1-Wire bus), then it decodes to −0.0625 °C as 16-bit two\'s complement / 16', () => {
    // docs/SOURCES.md §9 [D]: derived from the register format of the DS18B20 data sheet.
    expect(decodeProbeRaw(0xffff)).toBe(-0.0625);
  });

  test('when a value does not fit the 16-bit register, then decoding refuses it', () => {
    expect(() => decodeProbeRaw(0x10000)).toThrow(RangeError);
    expect(() => decodeProbeRaw(-1)).toThrow(RangeError);
    expect(() => decodeProbeRaw(1.5)).toThrow(RangeError);
  });

  // DS18B20 data sheet, Table 1 footnote: "The power-on reset value of the temperature register is +85°C."
  test('when a reading is exactly +85 °C, then it is flagged as the power-on value (probe datasheet, Table 1 footnote)', () => {
    expect(probeReadingFault(decodeProbeRaw(0x0550))).toBe('power_on_value');
    // One count either side is a real temperature.
    expect(probeReadingFault(decodeProbeRaw(0x0551))).toBeNull();
    expect(probeReadingFault(decodeProbeRaw(0x054f))).toBeNull();
  });

  // DS18B20 data sheet: measuring range −55 °C to +125 °C.
  test('when a reading is outside −55…+125 °C, then it is flagged out of range; the limits themselves are valid (probe datasheet)', () => {
    expect(probeReadingFault(decodeProbeRaw(0xfc90))).toBeNull(); // −55 °C
    expect(probeReadingFault(decodeProbeRaw(0x07d0))).toBeNull(); // +125 °C
    expect(probeReadingFault(decodeProbeRaw(0xfc8f))).toBe('out_of_range'); // −55.0625 °C
    expect(probeReadingFault(decodeProbeRaw(0x07d1))).toBe('out_of_range'); // +125.0625 °C
    // A sentinel some probe libraries return for a missing probe (from memory, docs/SOURCES.md §9 [M]).
    expect(probeReadingFault(-127)).toBe('out_of_range');
    expect(probeReadingFault(Number.NaN)).toBe('out_of_range');
  });

  test('when readings are ordinary panel temperatures, then nothing is flagged', () => {
    for (const raw of [0x0191, 0x00a2, 0x0008, 0x0000, 0xfff8, 0xff5e, 0xfe6f]) {
      expect(probeReadingFault(decodeProbeRaw(raw))).toBeNull();
    }
  });
});
