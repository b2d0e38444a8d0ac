import { expect, test } from "vitest";
import jStat from "jstat";
import { accuracyStatement, combinedRmseMm, daysUntil, linearUncertaintyMm, pastDueOn, referenceUncertaintyMm } from "./uncertainty.ts";
import { sensorReport, zeroOffsetTest } from "./report.ts";
import { olsFit } from "./stats.ts";
import type { ReportShot, Rule, SensorSpec } from "./types.ts";

const J = jStat as { studentt: { inv(p: number, df: number): number } };

test("u_ref from a tape certificate: a + b·L, hand-worked", () => {
  // hand-worked: 0.6 mm + 20 ppm × 25 m = 0.6 + 0.5 = 1.1 mm (ranging.md §7)
  expect(referenceUncertaintyMm({ method: "tape", distanceM: 25, tape: { uncertaintyMm: 0.6, uncertaintyPpm: 20 } })).toBeCloseTo(1.1, 12);
  // one part missing counts as 0: 20 ppm × 50 m = 1.0 mm; 0.6 mm alone
  expect(referenceUncertaintyMm({ method: "tape", distanceM: 50, tape: { uncertaintyMm: null, uncertaintyPpm: 20 } })).toBeCloseTo(1.0, 12);
  expect(referenceUncertaintyMm({ method: "tape", distanceM: 50, tape: { uncertaintyMm: 0.6 } })).toBeCloseTo(0.6, 12);
  // both missing: unknown, never 0
  expect(referenceUncertaintyMm({ method: "tape", distanceM: 50, tape: { uncertaintyMm: null, uncertaintyPpm: null } })).toBeNull();
  expect(referenceUncertaintyMm({ method: "tape", distanceM: 50, tape: null })).toBeNull();
});

test("u_ref from surveyed coordinates: √(σ_station² + σ_target²), hand-worked", () => {
  // hand-worked: σ 3 mm and 4 mm → √(9 + 16) = 5 mm
  expect(referenceUncertaintyMm({ method: "coordinates", stationSigmaMm: 3, targetSigmaMm: 4 })).toBeCloseTo(5, 12);
  // 1.5 and 2.0 → √(2.25 + 4) = 2.5 mm
  expect(referenceUncertaintyMm({ method: "coordinates", stationSigmaMm: 1.5, targetSigmaMm: 2 })).toBeCloseTo(2.5, 12);
  // a point without σ: unknown
  expect(referenceUncertaintyMm({ method: "coordinates", stationSigmaMm: 3, targetSigmaMm: null })).toBeNull();
});

test("u_ref for EDM: the named EDM first, else the rule's figures, else unknown", () => {
  // hand-worked: 1 mm + 1.5 ppm × 200 m = 1.3 mm
  expect(referenceUncertaintyMm({ method: "edm", distanceM: 200, edm: { uncertaintyMm: 1, uncertaintyPpm: 1.5 }, ruleEdm: { edmUncertaintyMm: 9 } })).toBeCloseTo(1.3, 12);
  expect(referenceUncertaintyMm({ method: "edm", distanceM: 200, ruleEdm: { edmUncertaintyMm: 2, edmUncertaintyPpm: 2 } })).toBeCloseTo(2.4, 12);
  expect(referenceUncertaintyMm({ method: "edm", distanceM: 200, ruleEdm: { edmUncertaintyMm: null, edmUncertaintyPpm: null } })).toBeNull();
  expect(referenceUncertaintyMm({ method: "edm", distanceM: 200 })).toBeNull();
});

test("the shot's own uncertainty wins, 0 included; a negative one is refused", () => {
  expect(referenceUncertaintyMm({ method: "tape", explicitMm: 0.4, distanceM: 25, tape: { uncertaintyMm: 9 } })).toBe(0.4);
  expect(referenceUncertaintyMm({ method: "edm", explicitMm: 0, distanceM: 25 })).toBe(0);
  expect(() => referenceUncertaintyMm({ method: "edm", explicitMm: -1, distanceM: 25 })).toThrow(/reference\.uncertaintyMm/);
  expect(linearUncertaintyMm(null, 5, null)).toBeNull();
});

test("combined RMSE adds the reference in quadrature (ASPRS Edition 2)", () => {
  // ASPRS Positional Accuracy Standards, Edition 2 (2023): the product's RMSE includes the
  // checkpoints' own RMSE as √(RMSE₁² + RMSE_ref²) — formula from memory (text not at hand).
  // Worked example from memory of the Edition 2 guidance: 2.0 cm from checkpoints with 1.0 cm
  // survey accuracy → √5 = 2.236 cm.
  expect(combinedRmseMm(20, 10)).toBeCloseTo(22.36, 2);
  expect(combinedRmseMm(3, 4)).toBeCloseTo(5, 12);
  expect(combinedRmseMm(3, null)).toBeNull();
  expect(combinedRmseMm(null, 1)).toBeNull();
});

test("past due: the session's own calendar date after the due date", () => {
  // the calendar date of startedAt in its own offset (ranging.md §7)
  expect(pastDueOn("2026-05-03", "2026-05-04T00:30:00+02:00")).toBe(true); // 3 May 22:30Z, 4 May there
  expect(pastDueOn("2026-05-04", "2026-05-04T23:59:00-08:00")).toBe(false); // due day itself still valid
  expect(pastDueOn(null, "2026-05-04T08:00:00Z")).toBe(false);
  expect(daysUntil("2026-06-03", "2026-05-04")).toBe(30);
  expect(daysUntil("2026-05-01", "2026-05-04")).toBe(-3);
});

test("zero offset t test: t = δ/SE(δ) against t₀.₉₇₅(n − 2) from jstat", () => {
  // e = δ + κ·D + noise; the fit is the project's OLS (checked elsewhere against hand values)
  const D = Float64Array.from([5, 10, 20, 40, 80, 120]);
  const e = Float64Array.from([3.1, 2.7, 3.4, 3.9, 4.2, 5.5]);
  const fit = olsFit(D, e)!;
  const z = zeroOffsetTest(fit, 6);
  expect(z.zeroOffsetT).toBeCloseTo(fit.intercept / fit.interceptSe, 12);
  // general-purpose statistics library from the registry: jstat 1.9.6 studentt.inv
  const crit = J.studentt.inv(0.975, 4);
  expect(crit).toBeCloseTo(2.776, 3); // NIST/SEMATECH e-Handbook t table, 4 df
  expect(z.zeroOffsetSignificant).toBe(Math.abs(z.zeroOffsetT!) > crit);
  expect(z.zeroOffsetSignificant).toBe(true);
  // an offset buried in noise is not significant
  const e2 = Float64Array.from([1.5, -2.1, 0.4, 2.6, -1.8, 0.9]);
  const f2 = olsFit(D, e2)!;
  const z2 = zeroOffsetTest(f2, 6);
  expect(Math.abs(z2.zeroOffsetT!)).toBeLessThan(J.studentt.inv(0.975, 4));
  expect(z2.zeroOffsetSignificant).toBe(false);
  expect(zeroOffsetTest(null, 2)).toEqual({ zeroOffsetT: null, zeroOffsetSignificant: null });
});

const sensor: SensorSpec = { id: "s", kind: "pulsed", wavelengthNm: 905, modulationHz: [], appliesAirCorrection: true, assumedRefractivity: 0, toleranceMm: 5, tolerancePpm: 0, outdoor: true };
const rule: Rule = { minShots: 4, coverageK: 2, minWithinPct: 80, rangeBandEdgesM: [0, 10, 30, 100] };
let seq = 0;
function mk(errorMm: number, u: number | null, o: Partial<ReportShot> = {}): ReportShot {
  return {
    id: `u-${++seq}`,
    takenAt: "2026-05-01T10:00:00+02:00",
    sessionId: "s1",
    sessionStartedAt: "2026-05-01T09:00:00+02:00",
    referenceM: 20,
    rangeM: 20 + errorMm / 1000,
    errorMm,
    repeatabilityMm: null,
    reflectancePct: 50,
    retro: false,
    illuminanceKlux: 20,
    excluded: false,
    wrap: false,
    airDefaulted: false,
    referenceUncertaintyMm: u,
    ...o,
  };
}

test("per sensor: referenceRmse, unknown count, combined RMSE and the reference test, hand-worked", () => {
  // e = 1, −1, 2, −2 → RMSE √(10/4) = 1.5811; u = 1, 1, 2, 2 → referenceRmse √(10/4) = 1.5811;
  // combined √(2.5 + 2.5) = √5; T(D̄) = 5 mm, r = 2 → limit 2.5 mm: pass
  const shots = [mk(1, 1), mk(-1, 1), mk(2, 2), mk(-2, 2), mk(300, null, { excluded: true })];
  const r = sensorReport({ sensor, rule, shots });
  expect(r.referenceRmseMm).toBeCloseTo(Math.sqrt(2.5), 12);
  expect(r.referenceUnknownN).toBe(0); // the excluded shot does not count
  expect(r.rmseCombinedMm).toBeCloseTo(Math.sqrt(5), 12);
  const ref = r.tests.find((t) => t.name === "reference")!;
  expect(ref).toEqual({ name: "reference", pass: true, value: r.referenceRmseMm, limit: 2.5 });
  expect(r.statement).toBe("rmse");
  expect(r.verdict).toBe("pass");

  // one unknown: the figures are null, the test's pass is null, the verdict unchanged (advisory)
  const withUnknown = sensorReport({ sensor, rule, shots: [...shots, mk(0, null)] });
  expect(withUnknown.referenceRmseMm).toBeNull();
  expect(withUnknown.referenceUnknownN).toBe(1);
  expect(withUnknown.rmseCombinedMm).toBeNull();
  expect(withUnknown.tests.find((t) => t.name === "reference")!.pass).toBeNull();
  expect(withUnknown.verdict).toBe("pass");

  // in the verdict: unknown or failed reference turns pass into insufficient
  const strict = { ...rule, referenceInVerdict: true };
  expect(sensorReport({ sensor, rule: strict, shots: [...shots, mk(0, null)] }).verdict).toBe("insufficient");
  const r4 = sensorReport({ sensor, rule: { ...strict, referenceRatio: 4 }, shots }); // limit 1.25 < 1.58
  expect(r4.tests.find((t) => t.name === "reference")!.pass).toBe(false);
  expect(r4.verdict).toBe("insufficient");
  expect(r4.failed).toContain("reference");
  expect(sensorReport({ sensor, rule: strict, shots }).verdict).toBe("pass");
  // a fail stays a fail
  const bad = [mk(8, 1), mk(7, 1), mk(9, 2), mk(8, 2)];
  expect(sensorReport({ sensor, rule: strict, shots: bad }).verdict).toBe("fail");
});

test("statement wording follows the rule's style", () => {
  const f = { n: 42, rmseMm: 3.4, rmseCombinedMm: 3.6, accuracy95Mm: 6.664, referenceUnknownN: 0 };
  const a = accuracyStatement(f, "rmse");
  expect(a.headline).toBe("rmseCombined");
  expect(a.sentence).toBe("Tested 3.6 mm range RMSE against 42 check-shots, reference included.");
  const b = accuracyStatement({ ...f, rmseCombinedMm: null, referenceUnknownN: 3 }, "rmse");
  expect(b.headline).toBe("rmse");
  expect(b.sentence).toContain("reference not included");
  expect(b.sentence).not.toMatch(/95/);
  const c = accuracyStatement(f, "nssda95");
  // NSSDA: Accuracy = 1.9600 · RMSE (FGDC-STD-007.3-1998)
  expect(c.headlineMm).toBeCloseTo(6.664, 12);
  expect(c.sentence).toMatch(/^Tested 6\.7 mm range accuracy at 95 % confidence level \(NSSDA\) against 42 check-shots/);
});
