// Per-sensor report (ranging.md §5–6): bias, SD (n − 1), RMSE, NSSDA 95 % accuracy 1.96·RMSE
// (FGDC-STD-007.3-1998; valid for near-normal, near-unbiased errors), P95|e| (Hyndman–Fan
// type 7), bias CI with Student t, OLS zero offset and scale, breakdowns, robust outlier flags
// (median ± 3·1.4826·MAD), drift per session, and the four acceptance tests with a precision
// bound adapted from ISO 17123-4 (reflector EDM; no conformance claimed): s ≤ σ·√(χ²₀.₉₅(ν)/ν);
// then ranging.md §7: the reference's RMS uncertainty, the combined RMSE, the advisory
// reference test and the zero-offset t test.
import { DomainError } from "./errors.ts";
import { chiSquareQuantile, tQuantile } from "./quantiles.ts";
import { olsFit, quantileType7Sorted } from "./stats.ts";
import { BRIGHT_SUN_KLUX, coverageFromCounts, rangeBandIndex, rangeBandLabels } from "./coverage.ts";
import { checkRule, checkSensor, isWrap, toleranceMm } from "./shot.ts";
import { airState } from "./air.ts";
import { unambiguousIntervalM } from "./phase.ts";
import { combinedRmseMm } from "./uncertainty.ts";
import type {
  AcceptanceTest,
  BandStats,
  DriftEntry,
  IlluminanceBand,
  ReflectanceClass,
  ReportShot,
  ReportShotRow,
  SensorReport,
  SensorReportInput,
  ShotFlag,
} from "./types.ts";

/** NSSDA factor: 95 % accuracy = 1.9600 · RMSE. */
export const NSSDA_FACTOR = 1.96;
/** Outlier when |e − median| > OUTLIER_K · 1.4826 · MAD. */
export const OUTLIER_K = 3;
export const MAD_TO_SIGMA = 1.4826;

/** Running figures of a band: sums shifted by the band's first value (keeps the SD accurate). */
class Acc {
  n = 0;
  k = 0;
  s1 = 0;
  s2 = 0;
  sq = 0;
  within = 0;
  add(e: number, w: boolean): void {
    if (this.n++ === 0) this.k = e;
    const d = e - this.k;
    this.s1 += d;
    this.s2 += d * d;
    this.sq += e * e;
    if (w) this.within++;
  }
  stats<B extends string>(band: B): BandStats<B> {
    const n = this.n;
    return {
      band,
      n,
      biasMm: n ? this.k + this.s1 / n : null,
      sdMm: n > 1 ? Math.sqrt(Math.max(0, this.s2 - (this.s1 * this.s1) / n) / (n - 1)) : null,
      rmseMm: n ? Math.sqrt(this.sq / n) : null,
      withinPct: n ? (100 * this.within) / n : null,
    };
  }
}

const REFLECTANCE: ReflectanceClass[] = ["dark", "mid", "bright", "retro"];
const ILLUMINANCE: IlluminanceBand[] = ["low", "moderate", "high"];

function checkShot(s: ReportShot, i: number): void {
  const p = `shots.${i}`;
  if (!s || typeof s !== "object") throw new DomainError(p, "missing", "shot missing");
  if (!(typeof s.referenceM === "number" && Number.isFinite(s.referenceM) && s.referenceM > 0)) {
    throw new DomainError(`${p}.referenceM`, "not_positive", `reference distance must be a positive number (got ${s.referenceM})`);
  }
  if (!(typeof s.errorMm === "number" && Number.isFinite(s.errorMm))) {
    throw new DomainError(`${p}.errorMm`, "not_finite", `range error must be a finite number (got ${s.errorMm})`);
  }
  if (!(typeof s.rangeM === "number" && Number.isFinite(s.rangeM))) {
    throw new DomainError(`${p}.rangeM`, "not_finite", `range must be a finite number (got ${s.rangeM})`);
  }
  if (!(typeof s.reflectancePct === "number" && Number.isFinite(s.reflectancePct) && s.reflectancePct >= 0)) {
    throw new DomainError(`${p}.reflectancePct`, "not_finite", `reflectance must be a number ≥ 0 (got ${s.reflectancePct})`);
  }
  const k = s.illuminanceKlux;
  if (k != null && !(typeof k === "number" && Number.isFinite(k) && k >= 0)) {
    throw new DomainError(`${p}.illuminanceKlux`, "not_finite", `illuminance must be a number ≥ 0 or null (got ${k})`);
  }
}

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

/** |sᵢ − c| in ascending order from s sorted ascending: a linear merge of the two halves. */
export function sortedAbsDeviations(s: Float64Array, c: number): Float64Array {
  const n = s.length;
  const out = new Float64Array(n);
  let lo = 0;
  let hi = n;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (s[mid] < c) lo = mid + 1;
    else hi = mid;
  }
  let i = lo - 1; // walks down the part below c
  let j = lo; // walks up the part at or above c
  for (let o = 0; o < n; o++) {
    if (j >= n || (i >= 0 && c - s[i] <= s[j] - c)) out[o] = c - s[i--];
    else out[o] = s[j++] - c;
  }
  return out;
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

type Session = { id: string; startedAt: string; t: number; n: number; sumE: number; sumD: number };

export function sensorReport(input: SensorReportInput): SensorReport {
  const { sensor, rule } = input;
  checkSensor(sensor);
  checkRule(rule);
  const shots = input.shots;
  if (!Array.isArray(shots)) throw new DomainError("shots", "not_list", "shots must be a list");
  const N = shots.length;
  const a = sensor.toleranceMm;
  const b = sensor.tolerancePpm;
  const k = rule.coverageK;
  const edges = rule.rangeBandEdgesM;
  const labels = rangeBandLabels(edges);

  const e = new Float64Array(N); // included errors (first n used)
  const d = new Float64Array(N); // included reference distances
  const limits = new Float64Array(N);
  const withinAll = new Uint8Array(N);
  const refl = REFLECTANCE.map(() => new Acc());
  const illu = ILLUMINANCE.map(() => new Acc());
  const range = labels.map(() => new Acc());
  const below = new Acc();
  const sessions = new Map<string, Session>();
  let lastSes: Session | null = null;
  const covDark = new Int32Array(labels.length);
  const covBright = new Int32Array(labels.length);
  let sun = false;
  let n = 0;
  let excluded = 0;
  let sumD = 0;
  let withinCount = 0;
  let maxAbs = 0;
  let sumU2 = 0; // Σ u_ref² over included shots (ranging.md §7)
  let unknownU = 0;

  for (let i = 0; i < N; i++) {
    const s = shots[i];
    checkShot(s, i);
    const lim = k * (a + (b * s.referenceM) / 1000);
    limits[i] = lim;
    const w = Math.abs(s.errorMm) <= lim;
    withinAll[i] = w ? 1 : 0;
    if (s.excluded) {
      excluded++;
      continue;
    }
    const err = s.errorMm;
    const u = s.referenceUncertaintyMm;
    if (typeof u === "number" && Number.isFinite(u) && u >= 0) sumU2 += u * u;
    else unknownU++;
    e[n] = err;
    d[n] = s.referenceM;
    n++;
    sumD += s.referenceM;
    if (w) withinCount++;
    const ae = Math.abs(err);
    if (ae > maxAbs) maxAbs = ae;
    const rc = s.retro ? 3 : s.reflectancePct < 20 ? 0 : s.reflectancePct <= 60 ? 1 : 2;
    refl[rc].add(err, w);
    const lx = s.illuminanceKlux;
    if (lx != null) {
      illu[lx < 10 ? 0 : lx < 50 ? 1 : 2].add(err, w);
      if (lx >= BRIGHT_SUN_KLUX) sun = true;
    }
    const rb = rangeBandIndex(s.referenceM, edges);
    if (rb < 0) below.add(err, w);
    else {
      range[rb].add(err, w);
      if (rc === 0) covDark[rb]++;
      else if (rc === 2) covBright[rb]++;
    }
    let ses: Session | undefined = lastSes !== null && lastSes.id === s.sessionId ? lastSes : sessions.get(s.sessionId);
    if (!ses) {
      const t = Date.parse(s.sessionStartedAt);
      ses = { id: s.sessionId, startedAt: s.sessionStartedAt, t, n: 0, sumE: 0, sumD: 0 };
      sessions.set(s.sessionId, ses);
    }
    lastSes = ses;
    ses.n++;
    ses.sumE += err;
    ses.sumD += s.referenceM;
  }

  const ei = e.subarray(0, n);
  const di = d.subarray(0, n);
  let biasMm: number | null = null;
  let sdMm: number | null = null;
  let rmseMm: number | null = null;
  let p95AbsMm: number | null = null;
  let med = 0;
  let madv = 0;
  if (n > 0) {
    let s1 = 0;
    let sq = 0;
    for (let i = 0; i < n; i++) {
      s1 += ei[i];
      sq += ei[i] * ei[i];
    }
    biasMm = s1 / n;
    rmseMm = Math.sqrt(sq / n);
    if (n > 1) {
      let ss = 0;
      for (let i = 0; i < n; i++) ss += (ei[i] - biasMm) ** 2;
      sdMm = Math.sqrt(ss / (n - 1));
    }
    const sorted = Float64Array.from(ei).sort(); // the one sort
    med = quantileType7Sorted(sorted, 0.5);
    madv = quantileType7Sorted(sortedAbsDeviations(sorted, med), 0.5);
    const abs = sortedAbsDeviations(sorted, 0);
    p95AbsMm = quantileType7Sorted(abs, 0.95);
  }
  const withinPct = n ? (100 * withinCount) / n : null;
  const biasCi95Mm: [number, number] | null =
    n > 1 && biasMm != null && sdMm != null
      ? (() => {
          const h = (tQuantile(0.975, n - 1) * sdMm) / Math.sqrt(n);
          return [biasMm - h, biasMm + h] as [number, number];
        })()
      : null;
  const fit = n >= 3 ? olsFit(di, ei, "shots") : null;

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

  // wrap: as computed with the shot, or again here against the sensor's (combined) interval in
  // default air (the index changes R_u by ~0.03 %, far below any limit's use here)
  const ruMm =
    sensor.kind === "cw" && sensor.modulationHz && sensor.modulationHz.length > 0
      ? unambiguousIntervalM(sensor.modulationHz, airState({}, sensor.wavelengthNm).n) * 1000
      : null;

  // rows with flags
  const outlierCut = OUTLIER_K * MAD_TO_SIGMA * madv;
  const rows: ReportShotRow[] = new Array(N);
  for (let i = 0; i < N; i++) {
    const s = shots[i];
    const outlier = n > 0 && Math.abs(s.errorMm - med) > outlierCut;
    const wrap = s.wrap || (ruMm != null && isWrap(s.errorMm, limits[i], ruMm));
    const flags: ShotFlag[] = outlier ? (wrap ? ["outlier", "wrap"] : ["outlier"]) : wrap ? ["wrap"] : [];
    rows[i] = {
      id: s.id,
      takenAt: s.takenAt,
      sessionId: s.sessionId,
      referenceM: s.referenceM,
      rangeM: s.rangeM,
      errorMm: s.errorMm,
      limitMm: limits[i],
      within: withinAll[i] === 1,
      repeatabilityMm: s.repeatabilityMm ?? null,
      excluded: !!s.excluded,
      flags,
    };
  }

  // drift
  const last = input.lastSignedOffBiasMm;
  const drift: DriftEntry[] = [...sessions.values()]
    .sort((x, y) => (Number.isNaN(x.t) || Number.isNaN(y.t) || x.t === y.t ? (x.startedAt < y.startedAt ? -1 : x.startedAt > y.startedAt ? 1 : x.id < y.id ? -1 : x.id > y.id ? 1 : 0) : x.t - y.t))
    .map((s) => {
      const bias = s.sumE / s.n;
      const tol = toleranceMm(sensor, s.sumD / s.n);
      return { sessionId: s.id, startedAt: s.startedAt, n: s.n, biasMm: bias, flag: last != null && Number.isFinite(last) && Math.abs(bias - last) > tol };
    });

  const byRange: BandStats<string>[] = [];
  if (below.n) byRange.push(below.stats(`<${edges[0]}`));
  range.forEach((acc, i) => acc.n && byRange.push(acc.stats(labels[i])));
  const cov = coverageFromCounts(sensor, labels, covDark, covBright, sun);

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
    byReflectance: REFLECTANCE.map((c, i) => refl[i].stats(c)).filter((x) => x.n > 0),
    byIlluminance: ILLUMINANCE.map((c, i) => illu[i].stats(c)).filter((x) => x.n > 0),
    byRange,
    coverage: { complete: cov.complete, missing: cov.missing, needsBrightSun: cov.needsBrightSun },
    drift,
    shots: rows,
  };
}
