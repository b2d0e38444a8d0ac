import { expect, test } from "vitest";
import fc from "fast-check";
import { cwRepeatabilityMm, MAX_UNWRAP_CANDIDATES, phaseFromSamples, rangeFromPhase, unambiguousIntervalM, unwrapFrequencies } from "./phase.ts";
import { C0, correctReportedRange, rangeFromRoundTrip } from "./range.ts";
import { DomainError } from "./errors.ts";

/** Noiseless N-bucket samples Iₖ = B + A·cos(φ − 2πk/N) (ranging.md §1 model). */
function samplesFor(phi: number, A: number, B: number, N = 4): number[] {
  return Array.from({ length: N }, (_, k) => B + A * Math.cos(phi - (2 * Math.PI * k) / N));
}
function phaseOf(d: number, f: number, n = 1): number {
  return ((4 * Math.PI * f * n * d) / C0) % (2 * Math.PI);
}

test("round trip: 66.7128190 ns → 10.000 m in vacuum", () => {
  // computed here from the definitions (R = c₀·t/2, c₀ exact per BIPM SI Brochure 9th ed.)
  expect(rangeFromRoundTrip(66.712819)).toBeCloseTo(10, 6);
  expect(rangeFromRoundTrip(66.712819, 1.0003)).toBeCloseTo(10 / 1.0003, 6);
});

test("four samples at 20 MHz → φ 2.515014 rad, A 500, B 1000, 3.000 m", () => {
  // computed here from the definitions (ranging.md §1)
  const s = [594.9808, 1293.1884, 1405.0192, 706.8116];
  const e = phaseFromSamples(s);
  expect(e.phaseRad).toBeCloseTo(2.515014, 6);
  expect(e.amplitude).toBeCloseTo(500, 3);
  expect(e.offset).toBeCloseTo(1000, 9);
  expect(rangeFromPhase(e.phaseRad, 20e6)).toBeCloseTo(3, 4);
  // N = 4 special case: φ = atan2(I₁ − I₃, I₀ − I₂)
  expect(e.phaseRad).toBeCloseTo(Math.atan2(s[1] - s[3], s[0] - s[2]), 12);
});

test("φ = π at 30 MHz is about 2.5 m", () => {
  // common practice (no source): half a modulation cycle at 30 MHz ≈ 2.5 m
  expect(rangeFromPhase(Math.PI, 30e6)).toBeCloseTo(2.5, 2);
  expect(unambiguousIntervalM(30e6)).toBeCloseTo(5, 1);
});

test("20 and 25 MHz: a 17 m target wraps to 2.010377 m and 5.008302 m and unwraps to 17.000 m", () => {
  // computed here from the definitions
  const r20 = rangeFromPhase(phaseFromSamples(samplesFor(phaseOf(17, 20e6), 400, 900)).phaseRad, 20e6);
  const r25 = rangeFromPhase(phaseFromSamples(samplesFor(phaseOf(17, 25e6), 400, 900)).phaseRad, 25e6);
  expect(r20).toBeCloseTo(2.010377, 6);
  expect(r25).toBeCloseTo(5.008302, 6);
  const u = unwrapFrequencies([
    { frequencyHz: 20e6, rangeM: r20 },
    { frequencyHz: 25e6, rangeM: r25 },
  ]);
  expect(u.rangeM).toBeCloseTo(17, 6);
  expect(u.wraps).toEqual([2, 2]);
  expect(u.spreadM).toBeLessThan(1e-6);
  // combined interval c₀/(2·gcd) with gcd 5 MHz ≈ 29.98 m
  expect(u.combinedM).toBeCloseTo(C0 / 1e7, 9);
  expect(unambiguousIntervalM([20e6, 25e6])).toBeCloseTo(C0 / 1e7, 9);
});

test("N = 3 and N = 8 samples estimate the same phase", () => {
  // ranging.md §1: any N ≥ 3 equally spaced samples
  for (const N of [3, 5, 8]) {
    const e = phaseFromSamples(samplesFor(1.234, 250, 600, N));
    expect(e.phaseRad).toBeCloseTo(1.234, 10);
    expect(e.amplitude).toBeCloseTo(250, 9);
    expect(e.offset).toBeCloseTo(600, 9);
  }
});

test("property: the phase estimator is unchanged by offset and positive gain", () => {
  fc.assert(
    fc.property(
      fc.array(fc.double({ min: -1e4, max: 1e4, noNaN: true }), { minLength: 3, maxLength: 16 }),
      fc.double({ min: -1e5, max: 1e5, noNaN: true }),
      fc.double({ min: 1e-3, max: 1e3, noNaN: true }),
      (s, off, gain) => {
        let est;
        try {
          est = phaseFromSamples(s);
        } catch {
          return; // a flat sample set carries no phase
        }
        // skip ill-conditioned cases (modulation lost in rounding of a large offset)
        const big = Math.abs(off) + gain * Math.max(...s.map(Math.abs));
        if (gain * est.amplitude < 1e-6 * big || est.amplitude < 1e-6 * Math.max(...s.map(Math.abs))) return;
        const t = phaseFromSamples(s.map((v) => gain * v + off));
        let d = Math.abs(t.phaseRad - est.phaseRad);
        d = Math.min(d, 2 * Math.PI - d);
        expect(d).toBeLessThan(1e-6);
        expect(Math.abs(t.amplitude - gain * est.amplitude)).toBeLessThanOrEqual(1e-6 * big);
      },
    ),
  );
});

test("property: unwrapping recovers any distance inside the combined interval from noiseless samples", () => {
  const sets = [
    [20e6, 25e6],
    [60e6, 80e6],
    [10e6, 12e6, 15e6],
    [100e6, 120e6],
  ];
  fc.assert(
    fc.property(fc.constantFrom(...sets), fc.double({ min: 0.001, max: 0.999, noNaN: true }), fc.double({ min: 1.0, max: 1.0004, noNaN: true }), (fs, frac, n) => {
      const combined = unambiguousIntervalM(fs, n);
      const d = frac * combined;
      const parts = fs.map((f) => ({ frequencyHz: f, rangeM: rangeFromPhase(phaseFromSamples(samplesFor(phaseOf(d, f, n), 300, 800, 4)).phaseRad, f, n) }));
      const u = unwrapFrequencies(parts, n);
      expect(Math.abs(u.rangeM - d)).toBeLessThan(1e-6);
    }),
  );
});

test("advisory CW repeatability (Lange & Seitz 2001, from memory)", () => {
  // σ_R ≈ (R_u/√8)·√B/(2A): R_u 7.5 m, B 1000, A 500 → 7.5/√8·√1000/1000 m
  expect(cwRepeatabilityMm(7.5, 500, 1000)).toBeCloseTo((((7.5 / Math.sqrt(8)) * Math.sqrt(1000)) / 1000) * 1000, 9);
  expect(cwRepeatabilityMm(7.5, 500, -5)).toBeNull();
  expect(() => cwRepeatabilityMm(7.5, 0, 10)).toThrow(DomainError);
});

test("reported ranges: first velocity correction unless the sensor corrects itself", () => {
  // ranging.md §1–2: D = D′·(1 + (N_ref − N_L)·1e-6)
  expect(correctReportedRange(100, { appliesAirCorrection: true, assumedRefractivity: 281.3 }, 270)).toBe(100);
  expect(correctReportedRange(100, { appliesAirCorrection: false, assumedRefractivity: 281.3 }, 270)).toBeCloseTo(100 * (1 + 11.3e-6), 12);
  expect(correctReportedRange(100, { appliesAirCorrection: false, assumedRefractivity: 0 }, 270)).toBeCloseTo(100 * (1 - 270e-6), 12);
});

test("phase and timing inputs that cannot give a range throw DomainError", () => {
  expect(() => phaseFromSamples([1, 2])).toThrowError(expect.objectContaining({ path: "readings.phase.0.samples", code: "too_few_samples" }));
  expect(() => phaseFromSamples([5, 5, 5, 5])).toThrowError(expect.objectContaining({ path: "readings.phase.0.samples", code: "amplitude_not_positive" }));
  expect(() => phaseFromSamples([1, NaN, 3])).toThrowError(expect.objectContaining({ path: "readings.phase.0.samples.1" }));
  expect(() => rangeFromRoundTrip(0)).toThrowError(expect.objectContaining({ path: "readings.roundTripNs.0" }));
  expect(() => rangeFromRoundTrip(-3)).toThrow(DomainError);
  expect(() => rangeFromPhase(1, 0)).toThrow(DomainError);
  expect(() => unambiguousIntervalM([])).toThrow(DomainError);
  expect(() => unwrapFrequencies([])).toThrow(DomainError);
  expect(() => correctReportedRange(0, { appliesAirCorrection: true }, 270)).toThrowError(expect.objectContaining({ path: "readings.rangesM.0" }));
});

// Issue 11: the unwrapping search is bounded by construction. Work is counted in candidates
// (each walked once per frequency), never timed.
test("the 20 and 25 MHz check value still unwraps to 17.000 m, walking a handful of candidates", () => {
  // computed here from the definitions (ranging.md check values)
  const parts = [20e6, 25e6].map((f) => ({ frequencyHz: f, rangeM: rangeFromPhase(phaseFromSamples(samplesFor(phaseOf(17, f), 400, 900)).phaseRad, f) }));
  const u = unwrapFrequencies(parts);
  expect(u.rangeM).toBeCloseTo(17, 6);
  // combined interval ≈ 29.98 m: 4 wraps of 7.49 m plus 5 of 6.00 m
  expect(u.candidates).toBe(9);
});

test("adversarial frequency sets are refused before any candidate is made, or cost at most MAX_UNWRAP_CANDIDATES", () => {
  // eight co-prime frequencies (the old CPU bomb): refused by count
  const eight = [20e6, 20e6 + 1, 20e6 + 3, 20e6 + 7, 20e6 + 9, 20e6 + 11, 20e6 + 13, 20e6 + 17].map((f) => ({ frequencyHz: f, rangeM: 1 }));
  expect(() => unwrapFrequencies(eight)).toThrowError(expect.objectContaining({ code: "too_many_frequencies", path: "readings.phase" }));
  // four co-prime GHz frequencies: 10 km / 0.15 m each ≈ 267 000 candidates — refused unsearched
  const ghz = [1e9, 1e9 + 1, 1e9 + 3, 1e9 + 7].map((f) => ({ frequencyHz: f, rangeM: 0.1 }));
  expect(() => unwrapFrequencies(ghz)).toThrowError(expect.objectContaining({ code: "unwrap_too_wide", path: "readings.phase" }));
  // four co-prime 20 MHz frequencies: combined interval 150 000 km, searched only up to 10 km
  const near = [20e6, 20e6 + 1, 20e6 + 3, 20e6 + 7].map((f) => ({ frequencyHz: f, rangeM: 3 }));
  expect(unwrapFrequencies(near).candidates).toBeLessThanOrEqual(MAX_UNWRAP_CANDIDATES);
});

test("property: any set of up to four frequencies is refused or walks at most MAX_UNWRAP_CANDIDATES", () => {
  fc.assert(
    fc.property(fc.array(fc.integer({ min: 1_000_000, max: 1_000_000_000 }), { minLength: 2, maxLength: 4 }), fc.double({ min: 0, max: 0.99, noNaN: true }), (fs, frac) => {
      const parts = fs.map((f) => ({ frequencyHz: f, rangeM: frac * unambiguousIntervalM(f) }));
      let u;
      try {
        u = unwrapFrequencies(parts);
      } catch (e) {
        expect(e).toMatchObject({ code: "unwrap_too_wide" });
        return;
      }
      expect(u.candidates).toBeLessThanOrEqual(MAX_UNWRAP_CANDIDATES);
      expect(Number.isFinite(u.rangeM)).toBe(true);
    }),
  );
});
