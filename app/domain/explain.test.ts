import { expect, test } from "vitest";
import { explainVerdict, formatSignedMm, type ExplainInput } from "./explain.ts";
import { sensorReport } from "./report.ts";
import type { AcceptanceTest, ReportShot, ShotFlag } from "./types.ts";

// Hand-worked sets: T(D) = 5 mm everywhere (no ppm part), k = 2 → limit 10 mm per shot.
// Limits of the rule as the report states them: count ≥ minShots, within ≥ 95 %, |bias| ≤ 5 mm.
const K = 2;
let seq = 0;
function row(errorMm: number, flags: ShotFlag[] = [], excluded = false) {
  return { id: `r${++seq}`, errorMm, limitMm: 10, within: Math.abs(errorMm) <= 10, excluded, flags };
}
/** The tests as sensorReport states them for these rows (checked against the core below). */
function testsOf(rows: ReturnType<typeof row>[], minShots: number, precisionLimit: number, sd: number | null): AcceptanceTest[] {
  const inc = rows.filter((r) => !r.excluded);
  const n = inc.length;
  const bias = inc.reduce((a, r) => a + r.errorMm, 0) / n;
  const within = (100 * inc.filter((r) => r.within).length) / n;
  return [
    { name: "count", pass: n >= minShots, value: n, limit: minShots },
    { name: "within", pass: within >= 95, value: within, limit: 95 },
    { name: "bias", pass: Math.abs(bias) <= 5, value: bias, limit: 5 },
    { name: "precision", pass: sd != null && sd <= precisionLimit, value: sd, limit: precisionLimit },
  ];
}
function input(rows: ReturnType<typeof row>[], tests: AcceptanceTest[]): ExplainInput {
  const verdict = !tests[0]!.pass ? "insufficient" : tests.every((t) => t.pass) ? "pass" : "fail";
  return { verdict, tests, shots: rows, coverageK: K };
}

test("sizes are signed with a real minus and grouped in threes from five digits (SI brochure §5.4.4)", () => {
  expect(formatSignedMm(-29953, 0)).toBe("−29\u202f953 mm");
  expect(formatSignedMm(1234.5, 1)).toBe("+1234.5 mm");
  expect(formatSignedMm(6.2, 2)).toBe("+6.20 mm");
  expect(formatSignedMm(-0.001, 2)).toBe("0.00 mm");
});

test("one wrap-flagged shot of −29 953 mm drives a failure; without it the four tests pass (hand-worked)", () => {
  // errors 1, −1, 2, 0 and the wrap −29 953 mm; rule minShots 4.
  // With it: bias = −29 951/5 = −5990.2 mm (four digits stay ungrouped); 4 of 5 within = 80 %.
  // Without it: n = 4, bias = 2/4 = +0.5 mm; SD² = (0.25 + 2.25 + 2.25 + 0.25)/3 = 5/3 → SD 1.291 mm;
  // precision limit 5·√(χ²₀.₉₅(3)/3) = 5·√(7.8147/3) = 8.070 mm (χ²₀.₉₅(3) = 7.815, NIST/SEMATECH
  // e-Handbook table 1.3.6.7.4) → all four pass.
  const rows = [row(1), row(-1), row(2), row(0), row(-29953, ["outlier", "wrap"])];
  const e = explainVerdict(input(rows, testsOf(rows, 4, 8.07, 13395)));
  expect(e.verdict).toBe("fail");
  expect(e.flagged).toEqual([{ flag: "wrap", shots: [{ id: rows[4]!.id, errorMm: -29953 }] }]);
  expect(e.stray).toBe(true);
  expect(e.drives).toEqual(["within", "bias", "precision"]);
  expect(e.without!.verdict).toBe("pass");
  const t = new Map(e.without!.tests.map((x) => [x.name, x]));
  expect(t.get("count")!.value).toBe(4);
  expect(t.get("bias")!.value).toBeCloseTo(0.5, 12);
  expect(t.get("within")!.value).toBeCloseTo(100, 12);
  expect(t.get("precision")!.value).toBeCloseTo(Math.sqrt(5 / 3), 12);
  expect(t.get("precision")!.limit).toBeCloseTo(8.0699, 3);
  expect(e.flaggedLine).toBe(
    "1 shot flagged wrap (−29\u202f953 mm) drives the share within limit, bias and precision (SD) tests; excluding it would give " +
      "100.0 % within limit (the rule needs 95.0 %), bias +0.50 mm (limit ±5.00 mm) and precision (SD) 1.29 mm (limit 8.07 mm): a pass.",
  );
  // the flagged shot comes before the tests' own sentences
  expect(e.lines[0]).toBe(e.flaggedLine);
  expect(e.lines[2]).toBe("Bias −5990.20 mm is beyond the limit ±5.00 mm.");
});

test("leaving the flagged shot out would drop below the shot count: the sentence says insufficient", () => {
  const rows = [row(1), row(-1), row(2), row(0), row(-29953, ["wrap"])];
  const e = explainVerdict(input(rows, testsOf(rows, 5, 8.07, 13395)));
  expect(e.without!.verdict).toBe("insufficient");
  expect(e.flaggedLine).toMatch(/drives the share within limit, bias and precision \(SD\) tests; excluding it would give .*, but leave only 4 shots where the rule needs 5 \(insufficient\)\.$/);
});

test("a stray outlier inside its limit does not explain a bias failure, and says so (hand-worked)", () => {
  // ten shots at +6 mm and one at +9 mm (all within 10 mm): bias 69/11 = +6.27 mm; without the
  // outlier +6.00 mm, still beyond ±5 mm.
  const rows = [...Array.from({ length: 10 }, () => row(6)), row(9, ["outlier"])];
  const e = explainVerdict(input(rows, testsOf(rows, 5, 20, 0.9)));
  expect(e.failed).toEqual(["bias"]);
  expect(e.drives).toEqual([]);
  expect(e.flaggedLine).toBe("1 shot flagged outlier (+9.0 mm) does not explain the failure: without it, bias +6.00 mm (limit ±5.00 mm) would still fail.");
  expect(e.lines[1]).toBe("Bias +6.27 mm is beyond the limit ±5.00 mm.");
});

test("many flagged shots are a pattern, not stray shots: no offer to exclude them (common practice)", () => {
  // 6 of 20 shots flagged (30 % > 10 %): dark boards in sun all reading ~18 mm long
  const rows = [...Array.from({ length: 14 }, () => row(0.5)), ...Array.from({ length: 6 }, (_, i) => row(18 + i / 10, ["outlier"]))];
  const e = explainVerdict(input(rows, testsOf(rows, 5, 20, 8)));
  expect(e.stray).toBe(false);
  expect(e.flaggedLine).toBe(
    "6 shots flagged outlier (largest +18.5, +18.4, +18.3 mm; 3 more): 30 % of the included shots, too many to be stray shots — look for a pattern (targets, light, range) before excluding any.",
  );
});

test("a pass says nothing; too few shots give the count sentence, after a wrap shot that already sinks the other tests", () => {
  const pass = [row(1), row(-1), row(0.5), row(0)];
  expect(explainVerdict(input(pass, testsOf(pass, 4, 9, 0.85))).lines).toEqual([]);
  // errors +1 and −29 953 mm: with both, 50 % within and bias −14 976 mm fail; with +1 alone, 100 % and +1.00 mm pass
  const few = [row(1), row(-29953, ["wrap"])];
  const e = explainVerdict(input(few, testsOf(few, 4, 9, 21180)));
  expect(e.verdict).toBe("insufficient");
  expect(e.lines).toEqual([
    "1 shot flagged wrap (−29\u202f953 mm) drives the share within limit and bias tests; excluding it would give 100.0 % within limit (the rule needs 95.0 %) and bias +1.00 mm (limit ±5.00 mm), but leave only 1 shot where the rule needs 4 (insufficient).",
    "Only 2 included shots; the rule needs 4.",
  ]);
  // a stray outlier that sinks nothing is not mentioned while the count is short
  const quiet = [row(1), row(2), row(3, ["outlier"])];
  expect(explainVerdict(input(quiet, testsOf(quiet, 4, 9, 1))).lines).toEqual(["Only 3 included shots; the rule needs 4."]);
});

test("excluded shots are neither named nor counted again", () => {
  const rows = [row(1), row(-1), row(2), row(0), row(-29953, ["wrap"], true)];
  const e = explainVerdict(input(rows, testsOf(rows, 4, 8.07, 1.29)));
  expect(e.flagged).toEqual([]);
  expect(e.without).toBeNull();
});

test("the tests without the flagged shots equal the ranging core's report with them excluded (ppm part: T linear in D)", () => {
  const sensor = { id: "s", kind: "pulsed" as const, wavelengthNm: 905, modulationHz: [], appliesAirCorrection: true, assumedRefractivity: 0, toleranceMm: 3, tolerancePpm: 40, outdoor: true };
  const rule = { minShots: 6, coverageK: 2, minWithinPct: 90, rangeBandEdgesM: [0, 10, 30, 100] };
  const errs = [0.4, -1.1, 2.0, 0.8, -0.6, 1.5, 0.2, -29953, 35];
  const shots: ReportShot[] = errs.map((e, i) => {
    const referenceM = 5 + 11 * i;
    return {
      id: `c${i}`,
      takenAt: "2026-05-01T10:00:00+02:00",
      sessionId: "s1",
      sessionStartedAt: "2026-05-01T09:00:00+02:00",
      referenceM,
      rangeM: referenceM + e / 1000,
      errorMm: e,
      repeatabilityMm: null,
      reflectancePct: 50,
      retro: false,
      illuminanceKlux: 20,
      excluded: false,
      wrap: e === -29953,
      airDefaulted: false,
    };
  });
  const report = sensorReport({ sensor, rule, shots });
  const e = explainVerdict({ ...report, coverageK: rule.coverageK });
  const ids = new Set(e.flagged.flatMap((g) => g.shots.map((s) => s.id)));
  expect(ids.has("c7")).toBe(true);
  const again = sensorReport({ sensor, rule, shots: shots.map((s) => ({ ...s, excluded: ids.has(s.id) })) });
  expect(e.without!.verdict).toBe(again.verdict);
  // the four tests of ranging.md §6; the advisory reference test (§7) is not recomputed
  const four = again.tests.filter((t) => t.name !== "reference");
  expect(four).toHaveLength(4);
  for (const t of four) {
    const mine = e.without!.tests.find((x) => x.name === t.name)!;
    expect(mine.pass).toBe(t.pass);
    expect(mine.limit).toBeCloseTo(t.limit, 9);
    if (t.value == null) expect(mine.value).toBeNull();
    else expect(mine.value!).toBeCloseTo(t.value, 9);
  }
});

/** issue 16: the same input as the server gives it: the included totals and only the flagged included rows. */
function fromTotals(inp: ExplainInput): ExplainInput {
  const inc = inp.shots.filter((s) => !s.excluded);
  const included = {
    n: inc.length,
    sumMm: inc.reduce((a, s) => a + s.errorMm, 0),
    sumSqMm2: inc.reduce((a, s) => a + s.errorMm * s.errorMm, 0),
    within: inc.filter((s) => s.within).length,
    sumTMm: inc.reduce((a, s) => a + s.limitMm / inp.coverageK, 0),
  };
  return { ...inp, shots: inc.filter((s) => s.flags.length > 0), included };
}

test("issue 16: from the included totals and the flagged rows alone, the explanation is the one over every row", () => {
  const sets = [
    { rows: [row(1), row(-1), row(2), row(0), row(-29953, ["outlier", "wrap"])], min: 4, prec: 8.07, sd: 13395 },
    { rows: [row(1), row(-1), row(2), row(0), row(-29953, ["wrap"])], min: 5, prec: 8.07, sd: 13395 },
    { rows: [...Array.from({ length: 10 }, () => row(6)), row(9, ["outlier"])], min: 5, prec: 20, sd: 0.9 },
    { rows: [...Array.from({ length: 14 }, () => row(0.5)), ...Array.from({ length: 6 }, (_, i) => row(18 + i / 10, ["outlier"]))], min: 5, prec: 20, sd: 8 },
    { rows: [row(1), row(-29953, ["wrap"])], min: 4, prec: 9, sd: 21180 },
    { rows: [row(1), row(-1), row(2), row(0), row(-29953, ["wrap"], true), row(3.5, ["outlier"])], min: 4, prec: 8.07, sd: 1.8 },
  ];
  for (const { rows, min, prec, sd } of sets) {
    const full = input(rows, testsOf(rows, min, prec, sd));
    const all = explainVerdict(full);
    const few = explainVerdict(fromTotals(full));
    expect(few.lines).toEqual(all.lines);
    expect(few.flagged).toEqual(all.flagged);
    expect(few.stray).toBe(all.stray);
    expect(few.drives).toEqual(all.drives);
    if (all.without == null) expect(few.without).toBeNull();
    else {
      expect(few.without!.verdict).toBe(all.without.verdict);
      for (const t of all.without.tests) {
        const mine = few.without!.tests.find((x) => x.name === t.name)!;
        expect(mine.pass).toBe(t.pass);
        if (t.value == null) expect(mine.value).toBeNull();
        else expect(mine.value!).toBeCloseTo(t.value, 6);
      }
    }
  }
});
