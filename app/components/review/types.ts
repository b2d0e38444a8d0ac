// The report and shot shapes of the HTTP contract (api.md), as the review
// screens read them from the API in the browser.
import type { AcceptanceTest, DriftEntry, ReportShotRow, ShotFlag, TestName } from "~/domain";

// The per-shot row, flags and tests are the ranging core's own types (one definition).
export type { ReportShotRow, ShotFlag, TestName };
export type Verdict = "pass" | "fail" | "insufficient";
export type ReportTest = AcceptanceTest;
export type DriftRow = DriftEntry;
export type BandRow = { band: string; n: number; biasMm: number | null; sdMm: number | null; rmseMm: number | null; withinPct: number | null };

export type ReportJson = {
  sensorId: string;
  rule: { minShots: number; coverageK: number; minWithinPct: number };
  n: number;
  excluded: number;
  biasMm: number | null;
  biasCi95Mm: [number, number] | null;
  sdMm: number | null;
  rmseMm: number | null;
  accuracy95Mm: number | null;
  p95AbsMm: number | null;
  maxAbsMm: number | null;
  withinPct: number | null;
  zeroOffsetMm: number | null;
  zeroOffsetSeMm: number | null;
  scalePpm: number | null;
  scaleSePpm: number | null;
  tests: ReportTest[];
  verdict: Verdict;
  byReflectance: BandRow[];
  byIlluminance: BandRow[];
  byRange: BandRow[];
  rSquared: number | null;
  airDefaulted: string[];
  coverage: { complete: boolean; missing: { rangeBand: string; reflectance: string; have: number; need: number }[]; needsBrightSun: boolean };
  drift: DriftRow[];
  shots: ReportShotRow[];
};

/** What the review screens need of a shot beyond the report row (from /api/shots). */
export type ShotDetail = {
  id: string;
  reflectancePct: number | null;
  retro: boolean;
  illuminanceKlux: number | null;
  targetLabel: string | null;
  photoIds: string[];
  exclusionReason: string | null;
  note: string | null;
};
