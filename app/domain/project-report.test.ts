// The document number and the rule in words of the project verification report (issue 14).
import { expect, test } from "vitest";
import { DEFAULT_RULE } from "./types.ts";
import { documentNumber, ruleInWords, versionedNumber, type ProjectReportRule } from "./project-report.ts";

const rule = (over: Partial<ProjectReportRule> = {}): ProjectReportRule => ({
  minShots: DEFAULT_RULE.minShots,
  coverageK: DEFAULT_RULE.coverageK,
  minWithinPct: DEFAULT_RULE.minWithinPct,
  rangeBandEdgesM: DEFAULT_RULE.rangeBandEdgesM,
  referenceRatio: 2,
  referenceInVerdict: false,
  statement: "rmse",
  edmUncertaintyMm: null,
  edmUncertaintyPpm: null,
  ...over,
});

test("the number keeps a short id and cuts a UUID to its first 8 characters; the version is appended", () => {
  expect(documentNumber("corridor")).toBe("SB-CORRIDOR");
  expect(documentNumber("dba9b6a1-2e74-4cb9-b1c8-1234b9493bc5")).toBe("SB-DBA9B6A1");
  expect(documentNumber("a/b c")).toBe("SB-ABC");
  expect(versionedNumber("corridor", 3)).toBe("SB-CORRIDOR-v3");
});

test("the rule in words names its numbers, its statement style and whether the reference is in the verdict", () => {
  const plain = ruleInWords(rule()).join(" ");
  expect(plain).toContain("at least 20 included check-shots");
  expect(plain).toContain("at least 95 % of the shots");
  expect(plain).toContain("k = 2");
  expect(plain).toContain("0–10 m, 10–30 m, 30–100 m, 100 m and beyond");
  expect(plain).toContain("RMSE only (ASPRS Positional Accuracy Standards, Edition 2, 2023)");
  expect(plain).toContain("advisory");
  expect(plain).toContain("unknown uncertainty");
  const ed2 = ruleInWords(rule({ minShots: 30, referenceInVerdict: true, statement: "nssda95", edmUncertaintyMm: 1, edmUncertaintyPpm: 1.5 })).join(" ");
  expect(ed2).toContain("at least 30 included check-shots");
  expect(ed2).toContain("part of the verdict");
  expect(ed2).toContain("NSSDA 95 % figure, 1.96 × RMSE (FGDC-STD-007.3-1998)");
  expect(ed2).toContain("±(1 mm + 1.5 ppm × D), k = 1");
});
