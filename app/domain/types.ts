// Shared types of the ranging core (see ranging.md and api.md, the product specification).
// Pure data shapes: no I/O, no framework imports.

export type SensorSpec = {
  id: string;
  kind: "pulsed" | "cw";
  wavelengthNm: number;
  modulationHz: number[];
  appliesAirCorrection: boolean;
  /** N_ref in ppm, (n − 1)·1e6; 0 = vacuum speed of light */
  assumedRefractivity: number;
  toleranceMm: number;
  tolerancePpm: number;
  outdoor: boolean;
};

export type AirInput = { airTempC?: number | null; pressureHpa?: number | null; humidityPct?: number | null };
export type AirField = "airTempC" | "pressureHpa" | "humidityPct";
export type Air = {
  tempC: number;
  pressureHpa: number;
  humidityPct: number;
  defaulted: AirField[];
  /** N_L in ppm */
  groupRefractivity: number;
  n: number;
};

export type TapeSpec = {
  standardTempC: number;
  standardTensionN: number;
  areaMm2: number;
  modulusGPa: number;
  weightNPerM: number;
  calibrationPpm: number;
};

export type GridPoint = { e: number; n: number; h: number };
export type GeoPoint = { lat: number; lon: number; h: number };
export type Position = { grid?: GridPoint | null; geo?: GeoPoint | null };

export type ReferenceInput =
  | { method: "edm"; distanceM: number }
  | { method: "tape"; distanceM: number; tape: TapeSpec; tempC: number; tensionN: number; support: "ground" | "ends"; spans: number }
  | { method: "coordinates"; station: Position; target: Position; instrumentHeightM: number; targetHeightM: number };

export type PhaseReading = { frequencyHz: number; samples: number[] };
export type Readings = { rangesM: number[] } | { roundTripNs: number[] } | { phase: PhaseReading[] };

export type Rule = {
  minShots: number;
  coverageK: number;
  minWithinPct: number;
  /** default [0,10,30,100] */
  rangeBandEdgesM: number[];
  // ranging.md §7 (issue 15); optional so older callers keep the defaults
  /** reference at least r times as accurate as the tolerance it checks (default 2) */
  referenceRatio?: number;
  /** a failed or unknown reference test turns a pass into insufficient (default false) */
  referenceInVerdict?: boolean;
  /** what screens, print and mail lead with (default "rmse") */
  statement?: Statement;
  /** u_ref of EDM shots that name no reference EDM: a + b·D (mm, ppm); null = unknown */
  edmUncertaintyMm?: number | null;
  edmUncertaintyPpm?: number | null;
};

export type Statement = "rmse" | "nssda95";

export type ShotComputed = {
  referenceM: number;
  rangeM: number;
  errorMm: number;
  toleranceMm: number;
  limitMm: number;
  within: boolean;
  repeatabilityMm: number | null;
  readingsCount: number;
  wrap: boolean;
  unambiguousM: number | null;
  phaseSpreadM: number | null;
  expectedSigmaMm: number | null;
  airDefaulted: string[];
  tapeCorrectionMm?: number | null;
};

export type ShotInput = { sensor: SensorSpec; air: AirInput; reference: ReferenceInput; readings: Readings; rule: Rule };

export type ReportShot = {
  id: string;
  takenAt: string; // ISO
  sessionId: string;
  sessionStartedAt: string;
  referenceM: number;
  rangeM: number;
  errorMm: number;
  repeatabilityMm: number | null;
  reflectancePct: number;
  retro: boolean;
  illuminanceKlux: number | null;
  excluded: boolean;
  wrap: boolean;
  airDefaulted: boolean;
  /** u_ref (mm, k = 1) of ranging.md §7; null or absent = unknown */
  referenceUncertaintyMm?: number | null;
};

export type ReflectanceClass = "dark" | "mid" | "bright" | "retro";
export type IlluminanceBand = "low" | "moderate" | "high";

export type BandStats<B extends string = string> = {
  band: B;
  n: number;
  biasMm: number | null;
  sdMm: number | null;
  rmseMm: number | null;
  withinPct: number | null;
};

export type TestName = "count" | "within" | "bias" | "precision" | "reference";
/** `pass` is null only for the advisory reference test when the reference uncertainty is unknown. */
export type AcceptanceTest = { name: TestName; pass: boolean | null; value: number | null; limit: number };

export type CoverageCell = { rangeBand: string; reflectance: "dark" | "bright"; have: number; need: number };
export type Coverage = { complete: boolean; missing: CoverageCell[]; needsBrightSun: boolean };

export type DriftEntry = { sessionId: string; startedAt: string; n: number; biasMm: number | null; flag: boolean };

export type ShotFlag = "outlier" | "wrap";
export type ReportShotRow = {
  id: string;
  takenAt: string;
  sessionId: string;
  referenceM: number;
  rangeM: number;
  errorMm: number;
  limitMm: number;
  within: boolean;
  repeatabilityMm: number | null;
  excluded: boolean;
  flags: ShotFlag[];
};

export type SensorReport = {
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
  rSquared: number | null;
  /** ranging.md §7: t = δ/SE(δ), ν = n − 2 */
  zeroOffsetT: number | null;
  zeroOffsetSignificant: boolean | null;
  referenceRmseMm: number | null;
  referenceUnknownN: number;
  rmseCombinedMm: number | null;
  statement: Statement;
  tests: AcceptanceTest[];
  verdict: "pass" | "fail" | "insufficient";
  failed: string[];
  byReflectance: BandStats<ReflectanceClass>[];
  byIlluminance: BandStats<IlluminanceBand>[];
  byRange: BandStats<string>[];
  coverage: Coverage;
  drift: DriftEntry[];
  shots: ReportShotRow[];
};

export type SensorReportInput = { sensor: SensorSpec; rule: Rule; shots: ReportShot[]; lastSignedOffBiasMm?: number | null };

export type CoverageShot = { referenceM: number; reflectancePct: number; retro: boolean; illuminanceKlux: number | null };
export type CoverageInput = { sensor: SensorSpec; rule: Rule; shots: CoverageShot[] };
export type CoverageResult = Coverage & { cells: CoverageCell[] };

/** Default acceptance rule of ranging.md §6. */
export const DEFAULT_RULE: Rule = {
  minShots: 20,
  coverageK: 2,
  minWithinPct: 95,
  rangeBandEdgesM: [0, 10, 30, 100],
  referenceRatio: 2,
  referenceInVerdict: false,
  statement: "rmse",
  edmUncertaintyMm: null,
  edmUncertaintyPpm: null,
};
