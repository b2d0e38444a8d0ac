// The report and shot shapes of the HTTP contract (api.md), as the review
// screens read them from the API in the browser.
import type { AcceptanceTest, BandStats, DriftEntry, ReportShotRow, SensorReport, ShotFlag, TestName } from "~/domain";

// The per-shot row, flags and tests are the ranging core's own types (one definition).
export type { ReportShotRow, ShotFlag, TestName };
export type Verdict = "pass" | "fail" | "insufficient";
export type ReportTest = AcceptanceTest;
export type DriftRow = DriftEntry;
export type BandRow = BandStats;

/** The report of GET /api/sensors/:sensorId/report: the ranging core's report plus what the server adds. */
export type ReportJson = Omit<SensorReport, "failed"> & {
  sensorId: string;
  rule: { minShots: number; coverageK: number; minWithinPct: number };
  airDefaulted: string[];
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
  /** issue 18: the SHA-256 of the scan or frames the shot was made from. */
  scanSha256?: string | null;
};
