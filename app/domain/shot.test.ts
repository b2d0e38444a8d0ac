import { expect, test } from "vitest";
import { computeShot, isWrap, toleranceMm } from "./shot.ts";
import { airState } from "./air.ts";
import { C0 } from "./range.ts";
import { DomainError } from "./errors.ts";
import { DEFAULT_RULE, type ReferenceInput, type Readings, type SensorSpec } from "./types.ts";

const pulsed: SensorSpec = { id: "roof", kind: "pulsed", wavelengthNm: 905, modulationHz: [], appliesAirCorrection: true, assumedRefractivity: 0, toleranceMm: 5, tolerancePpm: 10, outdoor: true };
const cw: SensorSpec = { id: "cam", kind: "cw", wavelengthNm: 850, modulationHz: [20e6], appliesAirCorrection: false, assumedRefractivity: 0, toleranceMm: 10, tolerancePpm: 0, outdoor: false };
const air = { airTempC: 15, pressureHpa: 1000, humidityPct: 40 };
const edm = (d: number): ReferenceInput => ({ method: "edm", distanceM: d });
const shot = (readings: Readings, sensor = pulsed, reference = edm(25)) => computeShot({ sensor, air, reference, readings, rule: DEFAULT_RULE });

function samplesFor(d: number, f: number, n: number): number[] {
  const phi = ((4 * Math.PI * f * n * d) / C0) % (2 * Math.PI);
  return [0, 1, 2, 3].map((k) => 1000 + 400 * Math.cos(phi - (Math.PI / 2) * k));
}

test("spec tolerance: ±(5 mm + 10 ppm) at 150 m is 6.5 mm", () => {
  // ranging.md §4 example
  expect(toleranceMm({ toleranceMm: 5, tolerancePpm: 10 }, 150)).toBeCloseTo(6.5, 12);
  expect(() => toleranceMm({ toleranceMm: 5, tolerancePpm: 10 }, -1)).toThrow(DomainError);
});

test("reported ranges as is: mean, repeatability, error, limit, within", () => {
  // computed here from the definitions (ranging.md §4)
  const s = shot({ rangesM: [25.004, 25.006] });
  expect(s.referenceM).toBe(25);
  expect(s.rangeM).toBeCloseTo(25.005, 12);
  expect(s.errorMm).toBeCloseTo(5, 9);
  expect(s.repeatabilityMm).toBeCloseTo(Math.SQRT2, 9);
  expect(s.toleranceMm).toBeCloseTo(5.25, 12);
  expect(s.limitMm).toBeCloseTo(10.5, 12);
  expect(s.within).toBe(true);
  expect(s.readingsCount).toBe(2);
  expect(s.wrap).toBe(false);
  expect(s.unambiguousM).toBeNull();
  expect(s.airDefaulted).toEqual([]);
  expect(shot({ rangesM: [25.011] }).within).toBe(false);
  expect(shot({ rangesM: [25.011] }).repeatabilityMm).toBeNull();
});

test("reported ranges get the first velocity correction from the assumed refractivity", () => {
  // ranging.md §1–2: D = D′·(1 + (N_ref − N_L)·1e-6)
  const sensor = { ...pulsed, appliesAirCorrection: false, assumedRefractivity: 281.3 };
  const s = computeShot({ sensor, air: {}, reference: edm(100), readings: { rangesM: [100.0] }, rule: DEFAULT_RULE });
  const a = airState({}, 905);
  expect(s.rangeM).toBeCloseTo(100 * (1 + (281.3 - a.groupRefractivity) * 1e-6), 12);
  expect(s.airDefaulted).toEqual(["airTempC", "pressureHpa", "humidityPct"]);
});

test("round-trip times use the session's air", () => {
  // R = c₀·t/(2·n_air) (ranging.md §1); 66.7128190 ns ↔ 10 m in vacuum
  const n = airState(air, 905).n;
  const s = shot({ roundTripNs: [66.712819, 66.712819] }, pulsed, edm(10));
  expect(s.rangeM).toBeCloseTo(10 / n, 6);
  expect(s.repeatabilityMm).toBe(0);
});

test("tape reference reports its correction", () => {
  const tape = { standardTempC: 20, standardTensionN: 50, areaMm2: 2.5, modulusGPa: 200, weightNPerM: 0.2, calibrationPpm: 0 };
  const s = shot({ rangesM: [30] }, pulsed, { method: "tape", distanceM: 30, tape, tempC: 30, tensionN: 50, support: "ground", spans: 1 });
  expect(s.tapeCorrectionMm).toBeCloseTo(11.6e-6 * 10 * 30 * 1000, 9);
  expect(s.referenceM).toBeCloseTo(30.00348, 9);
});

test("CW samples: range, unambiguous interval, advisory σ; a target beyond R_u is flagged wrap", () => {
  const n = airState(air, 850).n;
  const near = shot({ phase: [{ frequencyHz: 20e6, samples: samplesFor(3, 20e6, n) }] }, cw, edm(3));
  expect(near.errorMm).toBeCloseTo(0, 6);
  expect(near.unambiguousM).toBeCloseTo(C0 / (2 * 20e6 * n), 9);
  expect(near.expectedSigmaMm).toBeGreaterThan(0);
  expect(near.phaseSpreadM).toBeNull();
  expect(near.wrap).toBe(false);
  // 10 m target at 20 MHz (R_u ≈ 7.49 m) reads ≈ 2.51 m: |e| > L but e + 1·R_u ≈ 0 → wrap
  const far = shot({ phase: [{ frequencyHz: 20e6, samples: samplesFor(10, 20e6, n) }] }, cw, edm(10));
  expect(far.within).toBe(false);
  expect(far.wrap).toBe(true);
  expect(far.errorMm).toBeCloseTo(-far.unambiguousM! * 1000, 3);
  // two frequencies unwrap the 17 m target
  const two = shot({ phase: [20e6, 25e6].map((f) => ({ frequencyHz: f, samples: samplesFor(17, f, n) })) }, { ...cw, modulationHz: [20e6, 25e6] }, edm(17));
  expect(two.rangeM).toBeCloseTo(17, 6);
  expect(two.phaseSpreadM).toBeLessThan(1e-6);
  expect(two.unambiguousM).toBeCloseTo(C0 / (2 * 5e6 * n), 9);
  expect(two.readingsCount).toBe(2);
});

test("isWrap needs some m ≠ 0 to bring the error inside the limit", () => {
  // ranging.md §4 wrap flag
  expect(isWrap(-7480, 20, 7494.8)).toBe(true);
  expect(isWrap(14975, 20, 7494.8)).toBe(true); // m = −2
  expect(isWrap(3000, 20, 7494.8)).toBe(false);
  expect(isWrap(5, 20, 7494.8)).toBe(false); // already within
  expect(isWrap(-7480, 20, null)).toBe(false);
});

test("every readings field error carries its path", () => {
  const bad = (readings: unknown, path: string, sensor = pulsed) => {
    const run = () => computeShot({ sensor, air, reference: edm(25), readings: readings as Readings, rule: DEFAULT_RULE });
    expect(run).toThrowError(DomainError);
    expect(run).toThrowError(expect.objectContaining({ path }));
  };
  bad({ rangesM: [] }, "readings.rangesM");
  bad({ rangesM: [25, -1] }, "readings.rangesM.1");
  bad({ rangesM: [0] }, "readings.rangesM.0");
  bad({ rangesM: [NaN] }, "readings.rangesM.0");
  bad({ roundTripNs: [166.8, 0] }, "readings.roundTripNs.1");
  bad({ roundTripNs: [] }, "readings.roundTripNs");
  bad({ phase: [] }, "readings.phase", cw);
  bad({ phase: [{ frequencyHz: 20e6, samples: [1, 2] }] }, "readings.phase.0.samples", cw);
  bad({ phase: [{ frequencyHz: 20e6, samples: [7, 7, 7, 7] }] }, "readings.phase.0.samples", cw);
  bad(
    {
      phase: [
        { frequencyHz: 20e6, samples: [1, 2, 3, 4] },
        { frequencyHz: 0, samples: [1, 2, 3, 4] },
      ],
    },
    "readings.phase.1.frequencyHz",
    cw,
  );
  bad({ phase: [{ frequencyHz: 20e6, samples: [1, 2, Infinity] }] }, "readings.phase.0.samples.2", cw);
  bad({}, "readings");
  bad({ rangesM: [25], roundTripNs: [166] }, "readings");
  bad(null, "readings");
});

test("sensor, rule, air and reference errors carry their paths", () => {
  const base = { sensor: pulsed, air, reference: edm(25), readings: { rangesM: [25] }, rule: DEFAULT_RULE };
  const bad = (over: Record<string, unknown>, path: string) => {
    const run = () => computeShot({ ...base, ...over } as never);
    expect(run).toThrowError(expect.objectContaining({ path }));
  };
  bad({ air: { airTempC: 90 } }, "airTempC");
  bad({ air: { pressureHpa: 200 } }, "pressureHpa");
  bad({ air: { humidityPct: 120 } }, "humidityPct");
  bad({ reference: edm(0) }, "reference.distanceM");
  bad({ sensor: { ...pulsed, toleranceMm: -1 } }, "sensor.toleranceMm");
  bad({ sensor: { ...pulsed, modulationHz: [0] } }, "sensor.modulationHz.0");
  bad({ sensor: { ...pulsed, kind: "flash" } }, "sensor.kind");
  bad({ rule: { ...DEFAULT_RULE, coverageK: 0 } }, "rule.coverageK");
  bad({ rule: { ...DEFAULT_RULE, rangeBandEdgesM: [0, 30, 10] } }, "rule.rangeBandEdgesM.2");
  bad({ rule: { ...DEFAULT_RULE, minWithinPct: 101 } }, "rule.minWithinPct");
});

// ranging.md §9 (issue 11): readings the physics forbids are refused with their field path,
// and a figure that overflows is a DomainError, never a NaN or ±Infinity handed on.
test("ranges, round trips and references beyond the physics bounds are refused at their path", () => {
  const refused = (fn: () => unknown) => {
    try {
      fn();
    } catch (e) {
      expect(e).toBeInstanceOf(DomainError);
      return e as DomainError;
    }
    throw new Error("expected a DomainError");
  };
  expect(refused(() => shot({ rangesM: [25, 1e308] }))).toMatchObject({ path: "readings.rangesM.1", code: "implausible" });
  expect(refused(() => shot({ rangesM: [10_000.001] })).message).toMatch(/at most 10000 m/);
  expect(shot({ rangesM: [9_999] }, pulsed, edm(10_000)).referenceM).toBe(10_000);
  expect(refused(() => shot({ roundTripNs: [1e308] }))).toMatchObject({ path: "readings.roundTripNs.0" });
  expect(refused(() => shot({ roundTripNs: [70_001] })).message).toMatch(/at most 70000 ns/);
  expect(refused(() => shot({ rangesM: [25] }, pulsed, edm(1e308)))).toMatchObject({ path: "reference.distanceM" });
  // a registry tolerance so large that T(D) overflows: named at the sensor, not a NaN verdict
  expect(refused(() => shot({ rangesM: [25] }, { ...pulsed, tolerancePpm: 1e307 }, edm(9000)))).toMatchObject({ code: "figure_not_finite" });
});

test("a CW shot's frequencies must be the sensor's registered ones (±1 Hz), at most four", () => {
  const cw2: SensorSpec = { ...cw, modulationHz: [20e6, 25e6] };
  const phase = (fs: number[]) => ({ phase: fs.map((f) => ({ frequencyHz: f, samples: samplesFor(17, f, airState(air, 850).n) })) });
  expect(shot(phase([20e6 + 0.5, 25e6]), cw2, edm(17)).rangeM).toBeCloseTo(17, 3);
  expect(() => shot(phase([20e6, 1e-300]), cw2, edm(17))).toThrowError(expect.objectContaining({ path: "readings.phase.1.frequencyHz", code: "unregistered_frequency" }));
  expect(() => shot(phase([20e6, 25e6 + 2]), cw2, edm(17))).toThrowError(expect.objectContaining({ path: "readings.phase.1.frequencyHz" }));
  expect(() => shot(phase([20e6, 25e6, 20e6, 25e6, 20e6]), cw2, edm(17))).toThrowError(expect.objectContaining({ path: "readings.phase", code: "too_many_frequencies" }));
});
