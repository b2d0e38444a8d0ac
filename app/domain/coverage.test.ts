import { expect, test } from "vitest";
import { coverageChecklist, illuminanceBand, rangeBandOf, reflectanceClass } from "./coverage.ts";
import { DomainError } from "./errors.ts";
import { DEFAULT_RULE, type SensorSpec } from "./types.ts";

const sensor: SensorSpec = { id: "s", kind: "pulsed", wavelengthNm: 905, modulationHz: [], appliesAirCorrection: true, assumedRefractivity: 0, toleranceMm: 5, tolerancePpm: 10, outdoor: true };

test("range bands [lower, upper) of the default edges", () => {
  // ranging.md §5: default 0–10–30–100–∞ m
  expect(rangeBandOf(0, [0, 10, 30, 100])).toBe("0-10");
  expect(rangeBandOf(9.999, [0, 10, 30, 100])).toBe("0-10");
  expect(rangeBandOf(10, [0, 10, 30, 100])).toBe("10-30");
  expect(rangeBandOf(99.99, [0, 10, 30, 100])).toBe("30-100");
  expect(rangeBandOf(100, [0, 10, 30, 100])).toBe("100+");
  expect(rangeBandOf(3, [5, 20])).toBe("<5");
  expect(rangeBandOf(7.5, [0, 2.5, 7.5])).toBe("7.5+");
  expect(() => rangeBandOf(-1, [0, 10])).toThrow(DomainError);
  expect(() => rangeBandOf(5, [10, 0])).toThrow(DomainError);
  expect(() => rangeBandOf(5, [])).toThrow(DomainError);
});

test("reflectance classes and illuminance bands", () => {
  // ranging.md §5: dark < 20 %, mid 20–60 % inclusive, bright > 60 %; retro when marked
  expect(reflectanceClass(10, false)).toBe("dark");
  expect(reflectanceClass(19.99, false)).toBe("dark");
  expect(reflectanceClass(20, false)).toBe("mid");
  expect(reflectanceClass(60, false)).toBe("mid");
  expect(reflectanceClass(60.01, false)).toBe("bright");
  expect(reflectanceClass(10, true)).toBe("retro");
  // common practice: dark and bright range-spec targets ≈ 10 % and 80–90 %
  expect(reflectanceClass(85, false)).toBe("bright");
  // low < 10, moderate 10 to < 50, high ≥ 50 klux; common practice: full sun ≈ 100 klux → high
  expect(illuminanceBand(9.99)).toBe("low");
  expect(illuminanceBand(10)).toBe("moderate");
  expect(illuminanceBand(49.9)).toBe("moderate");
  expect(illuminanceBand(50)).toBe("high");
  expect(illuminanceBand(100)).toBe("high");
  expect(() => illuminanceBand(-1)).toThrowError(expect.objectContaining({ path: "illuminanceKlux" }));
  expect(() => reflectanceClass(NaN, false)).toThrowError(expect.objectContaining({ path: "reflectancePct" }));
});

test("coverage checklist: every band × {dark, bright} with ≥ 3 shots, bright sun for outdoor sensors", () => {
  // ranging.md §6
  const shots = [];
  for (const d of [5, 20, 50, 150]) for (const r of [10, 85]) for (let i = 0; i < 3; i++) shots.push({ referenceM: d, reflectancePct: r, retro: false, illuminanceKlux: 20 });
  const c = coverageChecklist({ sensor, rule: DEFAULT_RULE, shots });
  expect(c.cells).toHaveLength(8);
  expect(c.missing).toEqual([]);
  expect(c.needsBrightSun).toBe(true);
  expect(c.complete).toBe(false);
  const sunny = coverageChecklist({ sensor, rule: DEFAULT_RULE, shots: [...shots, { referenceM: 5, reflectancePct: 50, retro: false, illuminanceKlux: 50 }] });
  expect(sunny.complete).toBe(true);
  const indoor = coverageChecklist({ sensor: { ...sensor, outdoor: false }, rule: DEFAULT_RULE, shots });
  expect(indoor.complete).toBe(true);
  // mid and retro targets count for neither cell
  const few = coverageChecklist({
    sensor,
    rule: DEFAULT_RULE,
    shots: [
      { referenceM: 5, reflectancePct: 50, retro: false, illuminanceKlux: 80 },
      { referenceM: 5, reflectancePct: 90, retro: true, illuminanceKlux: null },
    ],
  });
  expect(few.missing).toHaveLength(8);
  expect(few.cells[0]).toEqual({ rangeBand: "0-10", reflectance: "dark", have: 0, need: 3 });
  expect(few.needsBrightSun).toBe(false);
});

test("the cells a site can fill come from its targets' surveyed distances and reflectance classes", async () => {
  const { siteCoverageCells } = await import("./coverage.ts");
  // ranging.md §5: bands [lower, upper) of 0–10–30–100–∞ m; dark < 20 %, bright > 60 %, mid and retro fill no cell.
  const t = (id: string, referenceM: number | null, reflectancePct: number, retro = false) => ({ id, label: id, referenceM, reflectancePct, retro });
  const cells = siteCoverageCells([t("dark12", 12.5, 10), t("grey25", 25, 50), t("white40", 40, 85), t("white10", 10, 85), t("prism", 60, 90, true), t("nodist", null, 10)], [0, 10, 30, 100]);
  expect(cells).toHaveLength(8);
  const filled = cells.filter((c) => c.targets.length).map((c) => `${c.rangeBand} ${c.reflectance}: ${c.targets.map((x) => x.id).join(",")}`);
  // 10 m is the lower edge of 10–30 (inclusive), so the white board at 10 m is a 10–30 bright target.
  expect(filled).toEqual(["10-30 dark: dark12", "10-30 bright: white10", "30-100 bright: white40"]);
  expect(cells.filter((c) => c.targets.length === 0).map((c) => `${c.rangeBand} ${c.reflectance}`)).toEqual(["0-10 dark", "0-10 bright", "30-100 dark", "100+ dark", "100+ bright"]);
});
