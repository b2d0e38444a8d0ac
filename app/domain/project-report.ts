// The project verification report (issue 14): what the client receives for a project. The
// server assembles its content (app/models/project-report.server.ts); this module holds the
// pure parts shared by the server and the page: the content's shape, the acceptance rule in
// words and the document number.
import type { AcceptanceTest, BandStats, Coverage, DriftEntry, Rule, Statement } from "./types.ts";

/** Bumped when the content's shape changes, so two versions are only compared within one format. */
export const PROJECT_REPORT_FORMAT = "shotbook-project-report/1";

export type ProjectReportRule = Required<Pick<Rule, "minShots" | "coverageK" | "minWithinPct" | "rangeBandEdgesM" | "referenceRatio" | "referenceInVerdict" | "statement">> & {
  edmUncertaintyMm: number | null;
  edmUncertaintyPpm: number | null;
};

/** A sensor's figures on the project: the sensor report (api.md) without its per-shot rows. */
export type ProjectSensorFigures = {
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
  zeroOffsetT: number | null;
  zeroOffsetSignificant: boolean | null;
  scalePpm: number | null;
  scaleSePpm: number | null;
  rSquared: number | null;
  referenceRmseMm: number | null;
  referenceUnknownN: number;
  rmseCombinedMm: number | null;
  statement: Statement;
  tests: AcceptanceTest[];
  verdict: "pass" | "fail" | "insufficient";
  byReflectance: BandStats[];
  byIlluminance: BandStats[];
  byRange: BandStats[];
  coverage: Coverage;
  drift: DriftEntry[];
  airDefaulted: string[];
  traceability: {
    kind: "sensor" | "tape" | "edm";
    id: string;
    label: string;
    number: string | null;
    laboratory: string | null;
    issued: string | null;
    due: string | null;
    expiredOnSessions: string[];
  }[];
};

export type ProjectReportSensor = {
  id: string;
  label: string;
  serial: string;
  kind: "pulsed" | "cw";
  wavelengthNm: number;
  toleranceMm: number;
  tolerancePpm: number;
  laserClass: string | null;
  calibrationDue: string | null;
  /** null when the project has no check-shot of this sensor (verdict "not enough shots"). */
  figures: ProjectSensorFigures | null;
  verdict: "pass" | "fail" | "insufficient";
  /** The accuracy statement of ranging.md §7 in the rule's style ("Tested … against n check-shots …"). */
  statementSentence: string;
  /** Why the verdict came out so (flagged shots first, then each failed test). */
  why: string[];
  /** SHA-256 of the sensor's project shots as computed (id, time, reference, range, error, limit, within, excluded): any new or changed shot changes the document. */
  shotsSha256: string;
};

export type ProjectReportContent = {
  format: typeof PROJECT_REPORT_FORMAT;
  project: { id: string; name: string; client: string; retired: boolean };
  rule: ProjectReportRule;
  sensors: ProjectReportSensor[];
  sites: { id: string; name: string; lat: number | null; lon: number | null }[];
  sessions: {
    id: string;
    sensorId: string;
    sensorLabel: string;
    siteId: string;
    siteName: string;
    startedAt: string;
    shots: number;
    excluded: number;
    crew: string;
    airTempC: number | null;
    pressureHpa: number | null;
    humidityPct: number | null;
  }[];
  /** Calendar dates of the first and last session (their own offsets), null without sessions. */
  period: { first: string; last: string } | null;
  exclusions: {
    shotId: string;
    sensorLabel: string;
    takenAt: string;
    referenceM: number;
    errorMm: number;
    reason: string;
    by: string;
    at: string;
    restoredAt: string | null;
    restoredBy: string | null;
    restoreReason: string | null;
  }[];
  signOffs: {
    id: string;
    sensorId: string;
    sensorLabel: string;
    decision: "approved" | "rejected";
    verdict: "pass" | "fail" | "insufficient";
    biasMm: number | null;
    note: string;
    by: string;
    at: string;
    periodFrom: string | null;
    periodTo: string | null;
  }[];
  totals: { shots: number; excluded: number; photos: number };
};

const num = (v: number) => String(v);

/** The acceptance rule of the project in plain sentences (ranging.md §6–7). */
export function ruleInWords(rule: ProjectReportRule): string[] {
  const edges = rule.rangeBandEdgesM;
  const bands = edges.map((e, i) => (i + 1 < edges.length ? `${num(e)}–${num(edges[i + 1]!)} m` : `${num(e)} m and beyond`)).join(", ");
  const edm =
    rule.edmUncertaintyMm == null && rule.edmUncertaintyPpm == null
      ? "EDM references that name no reference instrument have an unknown uncertainty."
      : `EDM references that name no reference instrument are taken as ±(${num(rule.edmUncertaintyMm ?? 0)} mm + ${num(rule.edmUncertaintyPpm ?? 0)} ppm × D), k = 1.`;
  return [
    `A sensor passes when it has at least ${num(rule.minShots)} included check-shots and all of these hold:`,
    `the absolute bias is at most the constant part a of the sensor's tolerance ±(a mm + b ppm × D);`,
    `at least ${num(rule.minWithinPct)} % of the shots lie within k × tolerance at their distance, with coverage factor k = ${num(rule.coverageK)};`,
    `the standard deviation is at most σ·√(χ²₀.₉₅(ν)/ν), ν = n − 1, σ the tolerance at the mean distance (adapted from ISO 17123-4, reflector EDM; no conformance claimed).`,
    `With fewer shots the verdict is "not enough shots"; otherwise a failed test makes it "fail".`,
    `The reference distances must be at least ${num(rule.referenceRatio)} times as accurate as the tolerance at the mean distance (RMS of their standard uncertainties); this test is ${rule.referenceInVerdict ? 'part of the verdict: failed or unknown, it turns a pass into "not enough shots"' : "advisory and does not change the verdict"}.`,
    rule.statement === "nssda95"
      ? "Accuracy is stated as the NSSDA 95 % figure, 1.96 × RMSE (FGDC-STD-007.3-1998), reference uncertainty not included."
      : "Accuracy is stated as RMSE only (ASPRS Positional Accuracy Standards, Edition 2, 2023), with the reference's own uncertainty added in quadrature where it is known.",
    `Range bands for the breakdowns: ${bands}. ${edm}`,
  ];
}

/** The document's number, the same for all its versions: "SB-" and the project's id (short ids as they are, long ones cut). */
export function documentNumber(projectId: string): string {
  const plain = projectId.replace(/[^A-Za-z0-9-]+/g, "");
  const short = /^[0-9a-f]{8}-[0-9a-f]{4}-/i.test(plain) || plain.length > 20 ? plain.slice(0, 8) : plain;
  return `SB-${short.toUpperCase()}`;
}

/** Number and version together, e.g. "SB-CORRIDOR-v3". */
export function versionedNumber(projectId: string, version: number): string {
  return `${documentNumber(projectId)}-v${version}`;
}
