// Public entry of the ranging core (ranging.md). Pure TypeScript: runs in the browser and on the server.
export * from "./types.ts";
export { DomainError } from "./errors.ts";
export { AIR_DEFAULTS, AIR_LIMITS, airState, airGroupRefractivity, groupRefractivityIag, buckVapourPressure, firstVelocityCorrectionPpm } from "./air.ts";
export { C0, rangeFromRoundTrip, correctReportedRange } from "./range.ts";
export { phaseFromSamples, rangeFromPhase, unambiguousIntervalM, unwrapFrequencies, cwRepeatabilityMm, frequencyGcdHz, MAX_UNWRAP_CANDIDATES } from "./phase.ts";
export type { PhaseEstimate, UnwrapInput, UnwrapResult } from "./phase.ts";
export { STEEL_ALPHA_PER_C, tapeCorrections, tapeTemperatureCorrection, tapeTensionCorrection, tapeSagCorrection, referenceDistance } from "./reference.ts";
export type { TapeCorrections, ReferenceResult } from "./reference.ts";
export { WGS84, GRS80, geodeticToGeocentric, gridDistance3d, geoChord } from "./geodesy.ts";
export type { Ellipsoid, Xyz } from "./geodesy.ts";
export { mean, sampleSd, rmse, quantileType7, quantileType7Sorted, median, mad, olsFit } from "./stats.ts";
export type { OlsFit } from "./stats.ts";
export { tQuantile, chiSquareQuantile, normalQuantile, incompleteBeta, incompleteGamma, logGamma } from "./quantiles.ts";
export { computeShot, toleranceMm, isWrap, checkSensor, checkRule } from "./shot.ts";
export {
  sensorReport,
  reportFromAggregates,
  reportRows,
  aggregateShots,
  orderStatistics,
  illuminanceIndex,
  reflectanceIndex,
  zeroOffsetTest,
  verdictFailures,
  inPeriod,
  sortedAbsDeviations,
  kthAbsDeviation,
  NSSDA_FACTOR,
  OUTLIER_K,
  MAD_TO_SIGMA,
} from "./report.ts";
export type { ReportGroup, ReportAggregates, OrderStatistics } from "./report.ts";
export { coverageChecklist, rangeBandOf, rangeBandLabels, rangeBandIndex, reflectanceClass, illuminanceBand, siteCoverageCells, COVERAGE_NEED } from "./coverage.ts";
export { DARK_BELOW_PCT, BRIGHT_ABOVE_PCT } from "./coverage.ts";
export type { SiteTarget, SiteCell } from "./coverage.ts";
export { ciddorPhaseIndex, ciddorGroupIndex } from "./ciddor.ts";
export type { CiddorInput } from "./ciddor.ts";
export { isImplausible, MAX_DISTANCE_M, MAX_ROUND_TRIP_NS, MAX_FREQUENCIES, FREQUENCY_MATCH_HZ, IMPLAUSIBLE_ERROR_MM, IMPLAUSIBLE_MIN_REFERENCE_M } from "./plausibility.ts";
export { distanceBoundsMessage, roundTripBoundsMessage, requireDistanceM, requireRoundTripNs, requireFigure, requireFrequencyCount, requireRegisteredFrequency } from "./plausibility.ts";
export {
  referenceUncertaintyMm,
  linearUncertaintyMm,
  combinedRmseMm,
  pastDueOn,
  daysUntil,
  laserCaution,
  accuracyStatement,
  LASER_CLASSES,
  EDITION2_PRESET,
  sessionHistoryFigures,
} from "./uncertainty.ts";
export type { LinearUncertainty, ReferenceUncertaintyInput, LaserClass, AccuracyStatement, StatementFigures } from "./uncertainty.ts";
export { explainVerdict, formatSignedMm, STRAY_SHARE } from "./explain.ts";
export type { ExplainInput, FlaggedGroup, FlaggedShot, IncludedTotals, VerdictExplanation } from "./explain.ts";
// issue 16: the report charts' series at any n
export { binIndex, compareNotable, compareSample, errorSeries, includedTotals, isNotable, sampleKey, seriesCells, SERIES_BINS, SERIES_MAX_NOTABLE, SERIES_PER_BIN } from "./series.ts";
export type { CellRow, ErrorSeries, SeriesBin, SeriesCell, SeriesRow } from "./series.ts";
// issue 16 (v16): the same over columns, for the server at 100,000 shots
export { rowId, seriesOfColumns, type ColumnsSeries, type SeriesColumns } from "./series-columns.ts";
// issue 18: check-shots from scans and depth frames (ranging.md §8)
export { symmetricEigen3 } from "./eigen3.ts";
export type { Vec3, Sym3, Eigen3 } from "./eigen3.ts";
export { ScanExtractor, planeFromMoments, planeFromPoints, rangeAlongRay, emptyMoments, addToMoments, plotOf, DEFAULT_SEARCH_RADIUS_M, DEFAULT_MIN_POINTS, PLOT_SAMPLE } from "./scan.ts";
export type { Moments, PlaneFit, ScanTarget, ScanTargetResult } from "./scan.ts";
export { depthFrameFromRaw, depthFromCorrelation, frameTarget, checkBox, checkIntrinsics } from "./depth.ts";
export type { Intrinsics, Box, DepthFrame, FrameTargetResult } from "./depth.ts";
export { biasDrift, DRIFT_RUN_LENGTH } from "./drift.ts";
export type { BiasDrift } from "./drift.ts";
// issue 14: the project verification report
export { PROJECT_REPORT_FORMAT, ruleInWords, documentNumber, versionedNumber } from "./project-report.ts";
export type { ProjectReportContent, ProjectReportSensor, ProjectSensorFigures, ProjectReportRule } from "./project-report.ts";
