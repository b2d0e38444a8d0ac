import { expect, test } from "vitest";
import { airGroupRefractivity, airState, buckVapourPressure, firstVelocityCorrectionPpm, groupRefractivityIag } from "./air.ts";
import { ciddorGroupIndex, ciddorPhaseIndex } from "./ciddor.ts";
import { DomainError } from "./errors.ts";

test("Ciddor phase index reproduces the NIST refractive-index table (8 rows)", () => {
  // NIST Engineering Metrology Toolbox, refractive index of air (Ciddor equation), table as
  // quoted in public code (secondary source), 450 ppm CO2: (°C, %RH, kPa, nm) → n
  const rows: [number, number, number, number, number][] = [
    [20, 0, 101.325, 633, 1.0002718],
    [20, 0, 60, 633, 1.000160924],
    [50, 0, 100, 633, 1.000243285],
    [40, 75, 120, 633, 1.000299418],
    [20, 0, 101.325, 1700, 1.000268479],
    [40, 100, 110, 1700, 1.000270247],
    [20, 0, 101.325, 300, 1.000286581],
    [-40, 0, 120, 300, 1.000427233],
  ];
  for (const [tempC, humidityPct, pressureKpa, wavelengthNm, n] of rows) {
    const c = ciddorPhaseIndex({ tempC, humidityPct, pressureKpa, wavelengthNm });
    expect(Math.abs(c - n)).toBeLessThan(1e-9);
  }
});

test("IAG 1999 group refractivity agrees with the Ciddor group index within 0.2 ppm, 650–1550 nm", () => {
  // ranging.md §2 cross-check: Ciddor (1996, Applied Optics 35) group index n − λ dn/dλ vs
  // IAG 1999 (Rüeger) N_g at its standard air (0 °C, 1013.25 hPa, dry, 375 ppm CO2) and at
  // two field atmospheres through N_L
  for (let nm = 650; nm <= 1550; nm += 50) {
    const std = (ciddorGroupIndex({ tempC: 0, humidityPct: 0, pressureKpa: 101.325, wavelengthNm: nm, co2Ppm: 375 }) - 1) * 1e6;
    expect(Math.abs(std - groupRefractivityIag(nm))).toBeLessThan(0.2);
    const ng = groupRefractivityIag(nm);
    for (const [t, rh, hpa] of [
      [20, 50, 1013.25],
      [30, 80, 900],
      [-10, 30, 1040],
    ]) {
      const c = (ciddorGroupIndex({ tempC: t, humidityPct: rh, pressureKpa: hpa / 10, wavelengthNm: nm, co2Ppm: 375 }) - 1) * 1e6;
      expect(Math.abs(c - airGroupRefractivity(ng, t, hpa, rh))).toBeLessThan(0.2);
    }
  }
});

test("IAG group refractivity and Buck vapour pressure", () => {
  // IAG 1999: N_g = 287.6155 + 4.88660/λ² + 0.06800/λ⁴, λ in µm; at 1 µm: 292.5701 (computed here)
  expect(groupRefractivityIag(1000)).toBeCloseTo(287.6155 + 4.8866 + 0.068, 10);
  // Buck (1981): e_w(0 °C) = 6.1121·(1.0007 + 3.46e-6·p). Without the enhancement factor
  // (1.0007 + 3.46e-6·p) the pure-water value at 20 °C is within 0.05 hPa of the tabulated
  // 23.39 hPa (saturation vapour pressure tables, e.g. CRC Handbook: 2.3393 kPa at 20 °C)
  expect(buckVapourPressure(0, 1013.25)).toBeCloseTo(6.1121 * (1.0007 + 3.46e-6 * 1013.25), 10);
  expect(Math.abs(buckVapourPressure(20, 1013.25) / (1.0007 + 3.46e-6 * 1013.25) - 23.393)).toBeLessThan(0.05);
});

test("air state: defaults each missing value on its own and reports it", () => {
  // ranging.md §2 defaults: 20 °C, 1013.25 hPa, 50 % RH
  const a = airState({ airTempC: 10, pressureHpa: null }, 905);
  expect(a.tempC).toBe(10);
  expect(a.pressureHpa).toBe(1013.25);
  expect(a.humidityPct).toBe(50);
  expect(a.defaulted).toEqual(["pressureHpa", "humidityPct"]);
  expect(a.n).toBeCloseTo(1 + a.groupRefractivity * 1e-6, 15);
  const full = airState({ airTempC: 18.5, pressureHpa: 1004.2, humidityPct: 62 }, 1550);
  expect(full.defaulted).toEqual([]);
  // computed here from the definitions: N_L = (273.15/1013.25)·N_g·p/T − 11.27·e/T
  const e = 0.62 * buckVapourPressure(18.5, 1004.2);
  const T = 291.65;
  expect(full.groupRefractivity).toBeCloseTo(((273.15 / 1013.25) * groupRefractivityIag(1550) * 1004.2) / T - (11.27 * e) / T, 10);
  // dry standard air at 0 °C gives N_g itself
  expect(airState({ airTempC: 0, pressureHpa: 1013.25, humidityPct: 0 }, 905).groupRefractivity).toBeCloseTo(groupRefractivityIag(905), 10);
});

test("first velocity correction K = N_ref − N_L", () => {
  // ranging.md §2
  expect(firstVelocityCorrectionPpm(281.3, 270.1)).toBeCloseTo(11.2, 10);
  expect(firstVelocityCorrectionPpm(0, 273)).toBe(-273);
});

test("impossible air throws DomainError with the field path", () => {
  const cases: [Record<string, number>, string][] = [
    [{ airTempC: -81 }, "airTempC"],
    [{ airTempC: 71 }, "airTempC"],
    [{ airTempC: NaN }, "airTempC"],
    [{ pressureHpa: 299 }, "pressureHpa"],
    [{ pressureHpa: 1201 }, "pressureHpa"],
    [{ humidityPct: -1 }, "humidityPct"],
    [{ humidityPct: 100.5 }, "humidityPct"],
  ];
  for (const [input, path] of cases) {
    expect(() => airState(input, 905)).toThrowError(DomainError);
    expect(() => airState(input, 905)).toThrowError(expect.objectContaining({ path }));
  }
  expect(() => airState({}, 0)).toThrowError(expect.objectContaining({ path: "sensor.wavelengthNm" }));
  expect(() => airState({}, NaN)).toThrowError(expect.objectContaining({ path: "sensor.wavelengthNm" }));
});
