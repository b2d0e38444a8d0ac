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
  rule: {
    minShots: number;
    coverageK: number;
    minWithinPct: number;
    // issue 15 (ranging.md §7)
    referenceRatio: number;
    referenceInVerdict: boolean;
    statement: "rmse" | "nssda95";
    edmUncertaintyMm: number | null;
    edmUncertaintyPpm: number | null;
  };
  ruleProjectId: string | null;
  airDefaulted: string[];
  traceability: TraceabilityRow[];
};

/** issue 15: a calibration certificate behind the report (api.md v1.1 traceability). */
export type TraceabilityRow = {
  kind: "sensor" | "tape" | "edm";
  id: string;
  label: string;
  number: string | null;
  laboratory: string | null;
  issued: string | null;
  due: string | null;
  expiredOnSessions: string[];
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
