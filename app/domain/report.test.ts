import { expect, test } from "vitest";
import fc from "fast-check";
import { inPeriod, sensorReport, sortedAbsDeviations } from "./report.ts";
import { chiSquareQuantile, tQuantile } from "./quantiles.ts";
import { DomainError } from "./errors.ts";
import type { ReportShot, Rule, SensorSpec } from "./types.ts";

// Hand-computed sets: T(D) = 5 mm (no ppm part), k = 2 → limit 10 mm.
const sensor: SensorSpec = { id: "s", kind: "pulsed", wavelengthNm: 905, modulationHz: [], appliesAirCorrection: true, assumedRefractivity: 0, toleranceMm: 5, tolerancePpm: 0, outdoor: true };
const rule: Rule = { minShots: 5, coverageK: 2, minWithinPct: 80, rangeBandEdgesM: [0, 10, 30, 100] };

let seq = 0;
function mk(errorMm: number, o: Partial<ReportShot> = {}): ReportShot {
  const referenceM = o.referenceM ?? 20;
  return {
    id: `shot-${++seq}`,
    takenAt: "2026-05-01T10:00:00+02:00",
    sessionId: "s1",
    sessionStartedAt: "2026-05-01T09:00:00+02:00",
    referenceM,
    rangeM: referenceM + errorMm / 1000,
    errorMm,
    repeatabilityMm: null,
    reflectancePct: 50,
    retro: false,
    illuminanceKlux: 20,
    excluded: false,
    wrap: false,
    airDefaulted: false,
    ...o,
  };
}

/** Any NaN or ±Infinity anywhere in a value (JSON would turn them into null silently). */
function hasNaN(v: unknown): boolean {
  if (typeof v === "number") return !Number.isFinite(v);
  if (Array.isArray(v)) return v.some(hasNaN);
  if (v && typeof v === "object") return Object.values(v).some(hasNaN);
  return false;
}

const s2 = { sessionId: "s2", sessionStartedAt: "2026-05-01T07:30:00-01:00" }; // 08:30Z, after s1 (07:00Z)
function setA(): ReportShot[] {
  return [
    mk(0, { referenceM: 50, reflectancePct: 80, illuminanceKlux: null, ...s2 }),
    mk(-2, { referenceM: 60, reflectancePct: 80, retro: true, illuminanceKlux: 100, ...s2 }),
    mk(1, { referenceM: 5, reflectancePct: 10, illuminanceKlux: 5 }),
    mk(-1, { referenceM: 8, reflectancePct: 10, illuminanceKlux: 20 }),
    mk(2, { referenceM: 15, reflectancePct: 50, illuminanceKlux: 60 }),
    mk(500, { referenceM: 20, excluded: true }),
  ];
}

test("pass: the figures of a small hand-computed set", () => {
  // computed by hand from ranging.md §5: e = 1, −1, 2, 0, −2 (the 500 mm shot is excluded)
  const r = sensorReport({ sensor, rule, shots: setA(), lastSignedOffBiasMm: 5 });
  expect(r.n).toBe(5);
  expect(r.excluded).toBe(1);
  expect(r.biasMm).toBeCloseTo(0, 12);
  expect(r.sdMm).toBeCloseTo(Math.sqrt(2.5), 12);
  expect(r.rmseMm).toBeCloseTo(Math.SQRT2, 12);
  expect(r.accuracy95Mm).toBeCloseTo(1.96 * Math.SQRT2, 12); // NSSDA 1.9600·RMSE
  expect(r.p95AbsMm).toBeCloseTo(2, 12); // |e| = 0,1,1,2,2: type 7 at h = 3.8
  expect(r.maxAbsMm).toBe(2);
  expect(r.withinPct).toBe(100);
  // t₀.₉₇₅(4) = 2.776 (NIST/SEMATECH t table)
  expect(tQuantile(0.975, 4)).toBeCloseTo(2.776, 3);
  const h = (tQuantile(0.975, 4) * Math.sqrt(2.5)) / Math.sqrt(5);
  expect(r.biasCi95Mm![0]).toBeCloseTo(-h, 12);
  expect(r.biasCi95Mm![1]).toBeCloseTo(h, 12);
  // OLS by hand: D̄ = 27.6, Sxx = 2605.2, Sxy = −93.0 → κ = −93/2605.2 mm/m, δ = −κ·27.6
  expect(r.scalePpm).toBeCloseTo((-93 / 2605.2) * 1000, 9);
  expect(r.zeroOffsetMm).toBeCloseTo((93 / 2605.2) * 27.6, 9);
  expect(r.zeroOffsetSeMm).toBeGreaterThan(0);
  expect(r.scaleSePpm).toBeGreaterThan(0);
  expect(r.rSquared).toBeCloseTo((93 * 93) / 2605.2 / 10, 9); // Sxy²/(Sxx·Syy), Syy = 10
  // tests: σ = T(D̄) = 5, bound 5·√(χ²₀.₉₅(4)/4), χ²₀.₉₅(4) = 9.488 (NIST/SEMATECH χ² table)
  expect(chiSquareQuantile(0.95, 4)).toBeCloseTo(9.488, 3);
  const bound = 5 * Math.sqrt(chiSquareQuantile(0.95, 4) / 4);
  expect(r.tests).toEqual([
    { name: "count", pass: true, value: 5, limit: 5 },
    { name: "within", pass: true, value: 100, limit: 80 },
    { name: "bias", pass: true, value: r.biasMm, limit: 5 },
    { name: "precision", pass: true, value: r.sdMm, limit: bound },
    // ranging.md §7: no shot carries u_ref here, so the advisory test is unknown; limit T(D̄)/2
    { name: "reference", pass: null, value: null, limit: 2.5 },
  ]);
  expect(r.referenceUnknownN).toBe(5);
  expect(r.verdict).toBe("pass");
  expect(r.failed).toEqual([]);
});

test("breakdowns by reflectance, illuminance and range band leave empty bands out", () => {
  const r = sensorReport({ sensor, rule, shots: setA() });
  expect(r.byReflectance.map((b) => [b.band, b.n, b.biasMm])).toEqual([
    ["dark", 2, 0],
    ["mid", 1, 2],
    ["bright", 1, 0],
    ["retro", 1, -2],
  ]);
  const dark = r.byReflectance[0];
  expect(dark.sdMm).toBeCloseTo(Math.SQRT2, 12);
  expect(dark.rmseMm).toBeCloseTo(1, 12);
  expect(dark.withinPct).toBe(100);
  expect(r.byReflectance[1].sdMm).toBeNull();
  // illuminance: 5 → low, 20 → moderate, 60 and 100 → high, null left out
  expect(r.byIlluminance.map((b) => [b.band, b.n])).toEqual([
    ["low", 1],
    ["moderate", 1],
    ["high", 2],
  ]);
  expect(r.byIlluminance[2].rmseMm).toBeCloseTo(2, 12);
  // range: 5, 8 → 0-10; 15 → 10-30; 50, 60 → 30-100; no 100+ shots → band left out
  expect(r.byRange.map((b) => [b.band, b.n])).toEqual([
    ["0-10", 2],
    ["10-30", 1],
    ["30-100", 2],
  ]);
});

test("drift: sessions in time order, flagged against the last signed-off bias", () => {
  // s1 (07:00Z) e = 1, −1, 2 → bias 2/3; s2 (08:30Z) e = 0, −2 → bias −1; last signed-off 5 mm,
  // T(D̄) = 5 mm: |2/3 − 5| = 4.33 ≤ 5 (no flag), |−1 − 5| = 6 > 5 (flag)
  const r = sensorReport({ sensor, rule, shots: setA(), lastSignedOffBiasMm: 5 });
  expect(r.drift.map((d) => d.sessionId)).toEqual(["s1", "s2"]);
  expect(r.drift[0].n).toBe(3);
  expect(r.drift[0].biasMm).toBeCloseTo(2 / 3, 12);
  expect(r.drift[1].biasMm).toBeCloseTo(-1, 12);
  expect(r.drift.map((d) => d.flag)).toEqual([false, true]);
  expect(sensorReport({ sensor, rule, shots: setA() }).drift.every((d) => !d.flag)).toBe(true);
});

test("excluded shots are listed but left out of the figures", () => {
  const r = sensorReport({ sensor, rule, shots: setA() });
  expect(r.shots).toHaveLength(6);
  const ex = r.shots.find((s) => s.errorMm === 500)!;
  expect(ex.excluded).toBe(true);
  expect(ex.within).toBe(false);
  expect(ex.limitMm).toBe(10);
  expect(r.maxAbsMm).toBe(2);
});

test("fail: bias test fails with its numbers; a gross error is flagged outlier", () => {
  // e = 6, 7, 8, 6, 7, 20: mean 9 > a = 5; within 5/6 = 83.3 % ≥ 80; SD = √(148/5) = 5.44 ≤ 5·√(χ²₀.₉₅(5)/5)
  // median 7, MAD 1 → 20 is beyond 7 ± 3·1.4826 (outlier); the others are not
  const shots = [6, 7, 8, 6, 7, 20].map((e) => mk(e));
  const r = sensorReport({ sensor, rule, shots });
  expect(r.verdict).toBe("fail");
  expect(r.failed).toEqual(["bias"]);
  const bias = r.tests.find((t) => t.name === "bias")!;
  expect(bias).toEqual({ name: "bias", pass: false, value: 9, limit: 5 });
  const within = r.tests.find((t) => t.name === "within")!;
  expect(within.value).toBeCloseTo(500 / 6, 12);
  expect(within.pass).toBe(true);
  const prec = r.tests.find((t) => t.name === "precision")!;
  expect(prec.value).toBeCloseTo(Math.sqrt(148 / 5), 12);
  expect(prec.limit).toBeCloseTo(5 * Math.sqrt(chiSquareQuantile(0.95, 5) / 5), 12);
  expect(prec.pass).toBe(true);
  expect(r.shots.map((s) => s.flags.includes("outlier"))).toEqual([false, false, false, false, false, true]);
  // OLS needs two distinct distances: all shots at 20 m → null figures
  expect(r.zeroOffsetMm).toBeNull();
  expect(r.scalePpm).toBeNull();
  expect(r.rSquared).toBeNull();
});

test("fail: precision and within tests", () => {
  // e = −9, 9, −9, 9, 0: bias 0, SD = √(324/4) = 9 > 5·√(χ²₀.₉₅(4)/4) = 7.70
  const p = sensorReport({ sensor, rule, shots: [-9, 9, -9, 9, 0].map((e) => mk(e)) });
  expect(p.verdict).toBe("fail");
  expect(p.failed).toEqual(["precision"]);
  expect(p.tests[3].value).toBeCloseTo(9, 12);
  expect(p.tests[3].limit).toBeCloseTo(7.7, 2);
  // e = 1, 2, 3, 12, −12: 3/5 = 60 % within < 80 %
  const w = sensorReport({ sensor, rule, shots: [1, 2, 3, 12, -12].map((e) => mk(e)) });
  expect(w.failed).toContain("within");
  expect(w.tests[1]).toEqual({ name: "within", pass: false, value: 60, limit: 80 });
});

test("insufficient: fewer shots than the rule asks, whatever the rest", () => {
  const r = sensorReport({ sensor, rule, shots: [1, 0, -1].map((e) => mk(e)) });
  expect(r.verdict).toBe("insufficient");
  expect(r.tests[0]).toEqual({ name: "count", pass: false, value: 3, limit: 5 });
  expect(r.failed).toEqual(["count"]);
  // one shot: no SD, no CI, no fit — null, never NaN
  const one = sensorReport({ sensor, rule, shots: [mk(3)] });
  expect(one.sdMm).toBeNull();
  expect(one.biasCi95Mm).toBeNull();
  expect(one.zeroOffsetMm).toBeNull();
  expect(one.tests[3].value).toBeNull();
  // no shots at all
  const none = sensorReport({ sensor, rule, shots: [] });
  expect(none.n).toBe(0);
  expect(none.biasMm).toBeNull();
  expect(none.withinPct).toBeNull();
  expect(none.verdict).toBe("insufficient");
  for (const rep of [r, one, none]) expect(hasNaN(rep)).toBe(false);
});

test("wrap flag is carried to the shot rows", () => {
  const r = sensorReport({ sensor, rule, shots: [mk(-7480, { wrap: true }), mk(1), mk(0)] });
  expect(r.shots[0].flags).toContain("wrap");
  expect(r.shots[1].flags).toEqual([]);
});

test("coverage on the report: cells missing and bright sun", () => {
  const r = sensorReport({ sensor, rule, shots: setA() });
  expect(r.coverage.complete).toBe(false);
  expect(r.coverage.needsBrightSun).toBe(false); // a shot at 60 klux
  expect(r.coverage.missing).toContainEqual({ rangeBand: "0-10", reflectance: "dark", have: 2, need: 3 });
  expect(r.coverage.missing).toContainEqual({ rangeBand: "100+", reflectance: "bright", have: 0, need: 3 });
  expect(r.coverage.missing).toHaveLength(8);
});

test("report inputs that are impossible throw DomainError with the path", () => {
  expect(() => sensorReport({ sensor, rule, shots: [mk(1), mk(NaN)] })).toThrowError(expect.objectContaining({ path: "shots.1.errorMm" }));
  expect(() => sensorReport({ sensor, rule, shots: [mk(1, { referenceM: 0 })] })).toThrowError(expect.objectContaining({ path: "shots.0.referenceM" }));
  expect(() => sensorReport({ sensor, rule: { ...rule, minShots: -1 }, shots: [] })).toThrowError(DomainError);
  expect(() => sensorReport({ sensor: { ...sensor, tolerancePpm: NaN }, rule, shots: [] })).toThrowError(expect.objectContaining({ path: "sensor.tolerancePpm" }));
});

test("wrap flag recomputed for a CW sensor from its combined interval", () => {
  // ranging.md §4: |e| > L but e + m·R_u within L for some m ≠ 0; 20 + 25 MHz → R_u ≈ 29.97 m
  const cw = { ...sensor, kind: "cw" as const, modulationHz: [20e6, 25e6] };
  const r = sensorReport({ sensor: cw, rule, shots: [mk(-29970), mk(1), mk(15000)] });
  expect(r.shots.map((s) => s.flags.includes("wrap"))).toEqual([true, false, false]);
});

test("period filter by the shot's own date; to takes its whole day", () => {
  expect(inPeriod("2026-05-04T23:59:00+02:00", "2026-05-01", "2026-05-04")).toBe(true);
  expect(inPeriod("2026-05-05T00:01:00+02:00", "2026-05-01", "2026-05-04")).toBe(false);
  expect(inPeriod("2026-04-30T23:00:00+02:00", "2026-05-01", null)).toBe(false);
  expect(inPeriod("2026-04-30T23:00:00+02:00")).toBe(true);
});

test("property: sorted absolute deviations equal sort(|s − c|)", () => {
  fc.assert(
    fc.property(fc.array(fc.double({ min: -1e3, max: 1e3, noNaN: true }), { minLength: 1, maxLength: 50 }), fc.double({ min: -1e3, max: 1e3, noNaN: true }), (v, c) => {
      const s = Float64Array.from(v).sort();
      const naive = Float64Array.from(v.map((x) => Math.abs(x - c))).sort();
      expect(Array.from(sortedAbsDeviations(s, c))).toEqual(Array.from(naive));
    }),
  );
});

test("property: report figures are invariant to shot order", () => {
  fc.assert(
    fc.property(
      fc.array(fc.record({ e: fc.double({ min: -50, max: 50, noNaN: true }), d: fc.double({ min: 0.5, max: 300, noNaN: true }), x: fc.boolean() }), { minLength: 1, maxLength: 40 }),
      fc.integer(),
      (rows, seed) => {
        const shots = rows.map((r, i) => mk(r.e, { referenceM: r.d, excluded: r.x && i % 3 === 0, sessionId: `s${i % 3}` }));
        const w = [...shots];
        let s = seed >>> 0;
        for (let i = w.length - 1; i > 0; i--) {
          s = (s * 1103515245 + 12345) >>> 0;
          const j = s % (i + 1);
          [w[i], w[j]] = [w[j], w[i]];
        }
        const a = sensorReport({ sensor, rule, shots });
        const b = sensorReport({ sensor, rule, shots: w });
        const close = (x: number | null, y: number | null) => (x == null ? expect(y).toBeNull() : expect(Math.abs(x - y!)).toBeLessThanOrEqual(1e-7 * Math.max(1, Math.abs(x))));
        expect(b.n).toBe(a.n);
        expect(b.excluded).toBe(a.excluded);
        for (const k of ["biasMm", "sdMm", "rmseMm", "p95AbsMm", "maxAbsMm", "withinPct", "zeroOffsetMm", "scalePpm"] as const) close(a[k], b[k]);
        expect(b.verdict).toBe(a.verdict);
        const fa = new Map(a.shots.map((r) => [r.id, r.flags.join()]));
        for (const r of b.shots) expect(r.flags.join()).toBe(fa.get(r.id));
      },
    ),
  );
});
