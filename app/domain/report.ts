// Per-sensor report (ranging.md §5–6): bias, SD (n − 1), RMSE, NSSDA 95 % accuracy 1.96·RMSE
// (FGDC-STD-007.3-1998; valid for near-normal, near-unbiased errors), P95|e| (Hyndman–Fan
// type 7), bias CI with Student t, OLS zero offset and scale, breakdowns, robust outlier flags
// (median ± 3·1.4826·MAD), drift per session, and the four acceptance tests with a precision
// bound adapted from ISO 17123-4 (reflector EDM; no conformance claimed): s ≤ σ·√(χ²₀.₉₅(ν)/ν);
// then ranging.md §7: the reference's RMS uncertainty, the combined RMSE, the advisory
// reference test and the zero-offset t test.
import { DomainError } from "./errors.ts";
import { chiSquareQuantile, tQuantile } from "./quantiles.ts";
import type { OlsFit } from "./stats.ts";
import { coverageFromCounts, rangeBandLabels } from "./coverage.ts";
import { checkRule, checkSensor, isWrap, toleranceMm } from "./shot.ts";
import { airState } from "./air.ts";
import { unambiguousIntervalM } from "./phase.ts";
import { combinedRmseMm } from "./uncertainty.ts";
import { aggregateShots, illuminanceIndex, orderStatistics, reflectanceIndex, sortedAbsDeviations, type ReportAggregates, type ReportAggregatesInput, type ReportGroup } from "./report-aggregates.ts";
export { aggregateShots, illuminanceIndex, orderStatistics, reflectanceIndex, sortedAbsDeviations, type ReportAggregates, type ReportAggregatesInput, type ReportGroup };
export { kthAbsDeviation, type OrderStatistics } from "./report-aggregates.ts";
import type { AcceptanceTest, BandStats, DriftEntry, IlluminanceBand, ReflectanceClass, ReportShot, ReportShotRow, Rule, SensorReport, SensorReportInput, SensorSpec, ShotFlag } from "./types.ts";

/** NSSDA factor: 95 % accuracy = 1.9600 · RMSE. */
export const NSSDA_FACTOR = 1.96;
/** Outlier when |e − median| > OUTLIER_K · 1.4826 · MAD. */
export const OUTLIER_K = 3;
export const MAD_TO_SIGMA = 1.4826;

const REFLECTANCE: ReflectanceClass[] = ["dark", "mid", "bright", "retro"];
const ILLUMINANCE: IlluminanceBand[] = ["low", "moderate", "high"];

/**
 * Period filter on a shot's takenAt: its own calendar date (the date part of the ISO string,
 * i.e. local to where the shot was taken) lies in [from, to], both "YYYY-MM-DD" and optional;
 * `to` takes its whole day.
 */
export function inPeriod(takenAt: string, from?: string | null, to?: string | null): boolean {
  const day = takenAt.slice(0, 10);
  if (from && day < from.slice(0, 10)) return false;
  if (to && day > to.slice(0, 10)) return false;
  return true;
}

/**
 * The tests that hold the verdict back, by name: any of the four §6 tests that failed, and the
 * reference test (failed or unknown) only when the rule puts it in the verdict (ranging.md §7).
 */
export function verdictFailures(tests: readonly { name: string; pass: boolean | null }[], referenceInVerdict: boolean | undefined): string[] {
  return tests.filter((t) => (t.name === "reference" ? !!referenceInVerdict && t.pass !== true : t.pass === false)).map((t) => t.name);
}

/**
 * Zero offset significance (ranging.md §7; common practice adapted from the zero-point test of
 * ISO 17123-4, no conformance claimed): t = δ/SE(δ), ν = n − 2, significant when |t| > t₀.₉₇₅(ν).
 */
export function zeroOffsetTest(fit: { intercept: number; interceptSe: number } | null, n: number): { zeroOffsetT: number | null; zeroOffsetSignificant: boolean | null } {
  if (!fit || n < 3 || !(fit.interceptSe > 0) || !Number.isFinite(fit.intercept)) return { zeroOffsetT: null, zeroOffsetSignificant: null };
  const t = fit.intercept / fit.interceptSe;
  if (!Number.isFinite(t)) return { zeroOffsetT: null, zeroOffsetSignificant: null };
  return { zeroOffsetT: t, zeroOffsetSignificant: Math.abs(t) > tQuantile(0.975, n - 2) };
}

type Session = { id: string; startedAt: string; t: number; n: number; s1: number; sumD: number };

/** A band's figures from its groups (the sums shifted by kE). */
function bandStats<B extends string>(band: B, gs: readonly ReportGroup[], kE: number): BandStats<B> {
  let n = 0,
    s1 = 0,
    s2 = 0,
    sq = 0,
    within = 0;
  for (const g of gs) {
    n += g.n;
    s1 += g.s1;
    s2 += g.s2;
    sq += g.sq;
    within += g.within;
  }
  return {
    band,
    n,
    biasMm: n ? kE + s1 / n : null,
    sdMm: n > 1 ? Math.sqrt(Math.max(0, s2 - (s1 * s1) / n) / (n - 1)) : null,
    rmseMm: n ? Math.sqrt(sq / n) : null,
    withinPct: n ? (100 * within) / n : null,
  };
}

/** Ordinary least squares e = δ + κ·D from shifted sums (the same figures as olsFit over the shots). */
function olsFromSums(n: number, kD: number, kE: number, d1: number, d2: number, s1: number, s2: number, de: number): OlsFit | null {
  if (n < 3) return null;
  const mx = kD + d1 / n;
  const my = kE + s1 / n;
  const sxx = d2 - (d1 * d1) / n;
  const sxy = de - (d1 * s1) / n;
  const syy = Math.max(0, s2 - (s1 * s1) / n);
  const scale = Math.max(1, Math.abs(mx));
  if (!(sxx > 1e-24 * scale * scale * n)) return null;
  const slope = sxy / sxx;
  const intercept = my - slope * mx;
  const sse = Math.max(0, syy - slope * sxy);
  const s2r = sse / (n - 2);
  const slopeSe = Math.sqrt(s2r / sxx);
  const interceptSe = Math.sqrt(s2r * (1 / n + (mx * mx) / sxx));
  const rSquared = syy > 0 ? Math.max(0, Math.min(1, 1 - sse / syy)) : null;
  return { intercept, slope, interceptSe, slopeSe, rSquared, n };
}

/**
 * The report of ranging.md §5–7 from a selection's group sums and sorted errors, without the
 * per-shot rows (`shots` is empty; reportRows makes them). Also gives the outlier rule's median
 * and cut, which the rows need.
 */
export function reportFromAggregates(input: ReportAggregatesInput): SensorReport & { outlier: { median: number; cut: number } | null } {
  const { sensor, rule } = input;
  checkSensor(sensor);
  checkRule(rule);
  const { kE, kD, groups } = input.aggregates;
  const a = sensor.toleranceMm;
  const edges = rule.rangeBandEdgesM;
  const labels = rangeBandLabels(edges);
  const sessions = new Map<string, Session>();
  const covDark = new Int32Array(labels.length);
  const covBright = new Int32Array(labels.length);
  let sun = false;
  let n = 0,
    excluded = 0,
    sumD = 0,
    withinCount = 0,
    maxAbs = 0,
    sumU2 = 0,
    unknownU = 0;
  let s1 = 0,
    s2 = 0,
    sq = 0,
    d1 = 0,
    d2 = 0,
    de = 0;
  const included: ReportGroup[] = [];
  for (const g of groups) {
    if (g.excluded) {
      excluded += g.n;
      continue;
    }
    if (!g.n) continue;
    included.push(g);
    n += g.n;
    sumD += g.sumD;
    withinCount += g.within;
    if (g.maxAbs > maxAbs) maxAbs = g.maxAbs;
    sumU2 += g.sumU2;
    unknownU += g.unknownU;
    s1 += g.s1;
    s2 += g.s2;
    sq += g.sq;
    d1 += g.d1;
    d2 += g.d2;
    de += g.de;
    if (g.sun) sun = true;
    if (g.rangeBand >= 0) {
      if (g.reflectance === 0) covDark[g.rangeBand] += g.n;
      else if (g.reflectance === 2) covBright[g.rangeBand] += g.n;
    }
    let ses = sessions.get(g.sessionId);
    if (!ses) sessions.set(g.sessionId, (ses = { id: g.sessionId, startedAt: g.sessionStartedAt, t: Date.parse(g.sessionStartedAt), n: 0, s1: 0, sumD: 0 }));
    ses.n += g.n;
    ses.s1 += g.s1;
    ses.sumD += g.sumD;
  }
  const agg = input.aggregates;
  const counted = "order" in agg ? agg.order.n : agg.sortedErrors.length;
  if (counted !== n) throw new DomainError("aggregates", "length_mismatch", `the sorted errors (${counted}) are not the included shots (${n})`);

  let biasMm: number | null = null;
  let sdMm: number | null = null;
  let rmseMm: number | null = null;
  const order = "order" in agg ? (agg.order.n ? agg.order : null) : orderStatistics(agg.sortedErrors);
  if (n > 0) {
    biasMm = kE + s1 / n;
    rmseMm = Math.sqrt(sq / n);
    if (n > 1) sdMm = Math.sqrt(Math.max(0, s2 - (s1 * s1) / n) / (n - 1));
  }
  const p95AbsMm = order ? order.p95Abs : null;
  const withinPct = n ? (100 * withinCount) / n : null;
  const biasCi95Mm: [number, number] | null =
    n > 1 && biasMm != null && sdMm != null
      ? (() => {
          const h = (tQuantile(0.975, n - 1) * sdMm) / Math.sqrt(n);
          return [biasMm - h, biasMm + h] as [number, number];
        })()
      : null;
  const fit = olsFromSums(n, kD, kE, d1, d2, s1, s2, de);

  // acceptance tests
  const dMean = n ? sumD / n : 0;
  const sigma = toleranceMm(sensor, dMean);
  const precisionLimit = n > 1 ? sigma * Math.sqrt(chiSquareQuantile(0.95, n - 1) / (n - 1)) : sigma;
  const tests: AcceptanceTest[] = [
    { name: "count", pass: n >= rule.minShots, value: n, limit: rule.minShots },
    { name: "within", pass: withinPct != null && withinPct >= rule.minWithinPct, value: withinPct, limit: rule.minWithinPct },
    { name: "bias", pass: biasMm != null && Math.abs(biasMm) <= a, value: biasMm, limit: a },
    { name: "precision", pass: sdMm != null && sdMm <= precisionLimit, value: sdMm, limit: precisionLimit },
  ];
  // ranging.md §7: the reference test is advisory unless the rule puts it in the verdict, and
  // then it can only hold a pass back (insufficient), never turn it into a fail
  const referenceRmseMm = n > 0 && unknownU === 0 ? Math.sqrt(sumU2 / n) : null;
  const ratio = rule.referenceRatio ?? 2;
  const referenceLimit = sigma / ratio;
  tests.push({ name: "reference", pass: referenceRmseMm == null ? null : referenceRmseMm <= referenceLimit, value: referenceRmseMm, limit: referenceLimit });
  const failed = verdictFailures(tests, rule.referenceInVerdict);
  const core = failed.filter((f) => f !== "reference");
  let verdict: SensorReport["verdict"] = !tests[0].pass ? "insufficient" : core.length === 0 ? "pass" : "fail";
  if (verdict === "pass" && failed.includes("reference")) verdict = "insufficient";

  // drift
  const last = input.lastSignedOffBiasMm;
  const drift: DriftEntry[] = [...sessions.values()]
    .sort((x, y) => (Number.isNaN(x.t) || Number.isNaN(y.t) || x.t === y.t ? (x.startedAt < y.startedAt ? -1 : x.startedAt > y.startedAt ? 1 : x.id < y.id ? -1 : x.id > y.id ? 1 : 0) : x.t - y.t))
    .map((s) => {
      const bias = kE + s.s1 / s.n;
      const tol = toleranceMm(sensor, s.sumD / s.n);
      return { sessionId: s.id, startedAt: s.startedAt, n: s.n, biasMm: bias, flag: last != null && Number.isFinite(last) && Math.abs(bias - last) > tol };
    });

  const byRange: BandStats<string>[] = [];
  const below = included.filter((g) => g.rangeBand < 0);
  if (below.length) byRange.push(bandStats(`<${edges[0]}`, below, kE));
  labels.forEach((label, i) => {
    const gs = included.filter((g) => g.rangeBand === i);
    if (gs.length) byRange.push(bandStats(label, gs, kE));
  });
  const cov = coverageFromCounts(sensor, labels, covDark, covBright, sun);
  const bands = <B extends string>(names: readonly B[], of: (g: ReportGroup) => number) =>
    names
      .map((c, i) =>
        bandStats(
          c,
          included.filter((g) => of(g) === i),
          kE,
        ),
      )
      .filter((x) => x.n > 0);

  return {
    n,
    excluded,
    biasMm,
    biasCi95Mm,
    sdMm,
    rmseMm,
    accuracy95Mm: rmseMm == null ? null : NSSDA_FACTOR * rmseMm,
    p95AbsMm,
    maxAbsMm: n ? maxAbs : null,
    withinPct,
    zeroOffsetMm: fit ? fit.intercept : null,
    zeroOffsetSeMm: fit ? fit.interceptSe : null,
    scalePpm: fit ? fit.slope * 1000 : null,
    scaleSePpm: fit ? fit.slopeSe * 1000 : null,
    rSquared: fit ? fit.rSquared : null,
    ...zeroOffsetTest(fit, n),
    referenceRmseMm,
    referenceUnknownN: unknownU,
    rmseCombinedMm: combinedRmseMm(rmseMm, referenceRmseMm),
    statement: rule.statement ?? "rmse",
    tests,
    verdict,
    failed,
    byReflectance: bands(REFLECTANCE, (g) => g.reflectance),
    byIlluminance: bands(ILLUMINANCE, (g) => g.illuminance),
    byRange,
    coverage: { complete: cov.complete, missing: cov.missing, needsBrightSun: cov.needsBrightSun },
    drift,
    shots: [],
    outlier: order ? { median: order.median, cut: OUTLIER_K * MAD_TO_SIGMA * order.mad } : null,
  };
}

/**
 * The per-shot rows of the report (limit, within, outlier and wrap flags) for shots in the
 * order given; `outlier` is the median and cut over the selection's included shots.
 */
export function reportRows(shots: readonly ReportShot[], sensor: SensorSpec, rule: Rule, outlier: { median: number; cut: number } | null): ReportShotRow[] {
  const a = sensor.toleranceMm;
  const b = sensor.tolerancePpm;
  const k = rule.coverageK;
  // wrap: as computed with the shot, or again here against the sensor's (combined) interval in
  // default air (the index changes R_u by ~0.03 %, far below any limit's use here)
  const ruMm = sensor.kind === "cw" && sensor.modulationHz && sensor.modulationHz.length > 0 ? unambiguousIntervalM(sensor.modulationHz, airState({}, sensor.wavelengthNm).n) * 1000 : null;
  const rows: ReportShotRow[] = new Array(shots.length);
  for (let i = 0; i < shots.length; i++) {
    const s = shots[i];
    const lim = k * (a + (b * s.referenceM) / 1000);
    const isOutlier = outlier != null && Math.abs(s.errorMm - outlier.median) > outlier.cut;
    const wrap = s.wrap || (ruMm != null && isWrap(s.errorMm, lim, ruMm));
    const flags: ShotFlag[] = isOutlier ? (wrap ? ["outlier", "wrap"] : ["outlier"]) : wrap ? ["wrap"] : [];
    rows[i] = {
      id: s.id,
      takenAt: s.takenAt,
      sessionId: s.sessionId,
      referenceM: s.referenceM,
      rangeM: s.rangeM,
      errorMm: s.errorMm,
      limitMm: lim,
      within: Math.abs(s.errorMm) <= lim,
      repeatabilityMm: s.repeatabilityMm ?? null,
      excluded: !!s.excluded,
      flags,
    };
  }
  return rows;
}

/** The whole report over the shots themselves (the tablet, and the server's per-shot rows). */
export function sensorReport(input: SensorReportInput): SensorReport {
  const { sensor, rule } = input;
  checkSensor(sensor);
  checkRule(rule);
  const shots = input.shots;
  if (!Array.isArray(shots)) throw new DomainError("shots", "not_list", "shots must be a list");
  const { outlier, ...r } = reportFromAggregates({ sensor, rule, aggregates: aggregateShots(shots, sensor, rule), lastSignedOffBiasMm: input.lastSignedOffBiasMm });
  return { ...r, shots: reportRows(shots, sensor, rule, outlier) };
}
