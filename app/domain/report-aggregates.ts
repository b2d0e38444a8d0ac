// The sums a sensor report is computed from (issue 16): shots grouped by band, reflectance and
// illuminance, the sorted errors, and the order statistics (median, MAD, P95|e|) read from them.
// report.ts turns them into the report; the server reads the same sums with SQL.
import { DomainError } from "./errors.ts";
import { quantileType7Sorted } from "./stats.ts";
import { BRIGHT_SUN_KLUX, rangeBandIndex } from "./coverage.ts";
import type { ReportShot, Rule, SensorSpec } from "./types.ts";

export function checkShot(s: ReportShot, i: number): void {
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
 * The shots of a selection that share a session, exclusion, reflectance class, illuminance band
 * and range band, summed (issue 16: the server sums these in SQL, the tablet and tests in JS;
 * both then go through reportFromAggregates). Sums of e and D are shifted by the selection's
 * kE and kD (values taken from the data), which keeps SD, Sxx and Sxy accurate from one pass.
 */
export type ReportGroup = {
  sessionId: string;
  sessionStartedAt: string;
  excluded: boolean;
  /** 0 dark, 1 mid, 2 bright, 3 retro (ranging.md §5). */
  reflectance: number;
  /** 0 low, 1 moderate, 2 high; −1 when the shot has no illuminance. */
  illuminance: number;
  /** Index of the range band of D (rangeBandIndex); −1 below the first edge. */
  rangeBand: number;
  n: number;
  /** Shots with |e| ≤ k · T(D). */
  within: number;
  /** Σ(e − kE), Σ(e − kE)², Σe² */
  s1: number;
  s2: number;
  sq: number;
  /** Σ(D − kD), Σ(D − kD)², Σ(D − kD)(e − kE), ΣD */
  d1: number;
  d2: number;
  de: number;
  sumD: number;
  /** Σu_ref² over shots with a known u_ref, and the count of those without (ranging.md §7). */
  sumU2: number;
  unknownU: number;
  maxAbs: number;
  /** Any shot at ≥ BRIGHT_SUN_KLUX. */
  sun: boolean;
  airDefaulted: boolean;
};

/**
 * A selection summed by groups, with the included errors in ascending order (exact order
 * statistics) or, from the server's report threads, the order statistics already taken from them.
 */
export type ReportAggregates = { kE: number; kD: number; groups: ReportGroup[] } & ({ sortedErrors: Float64Array } | { order: OrderStatistics });

export type ReportAggregatesInput = { sensor: SensorSpec; rule: Rule; aggregates: ReportAggregates; lastSignedOffBiasMm?: number | null };

/** Illuminance band index of ranging.md §5 (low < 10 klux, moderate 10 to < 50, high ≥ 50); −1 without a value. */
export const illuminanceIndex = (lx: number | null | undefined): number => (lx == null ? -1 : lx < 10 ? 0 : lx < 50 ? 1 : 2);
/** Reflectance class index (dark < 20 %, mid 20–60 % inclusive, bright > 60 %, retro when marked). */
export const reflectanceIndex = (pct: number, retro: boolean): number => (retro ? 3 : pct < 20 ? 0 : pct <= 60 ? 1 : 2);

/** Sums the shots by group, in JS (the server does the same in SQL). Checks every shot. */
export function aggregateShots(shots: readonly ReportShot[], sensor: SensorSpec, rule: Rule): ReportAggregates {
  const a = sensor.toleranceMm;
  const b = sensor.tolerancePpm;
  const k = rule.coverageK;
  const edges = rule.rangeBandEdgesM;
  let kE = 0;
  let kD = 0;
  let first = true;
  const e = new Float64Array(shots.length);
  let n = 0;
  const groups = new Map<string, ReportGroup>();
  for (let i = 0; i < shots.length; i++) {
    const s = shots[i];
    checkShot(s, i);
    if (!s.excluded && first) {
      kE = s.errorMm;
      kD = s.referenceM;
      first = false;
    }
  }
  for (let i = 0; i < shots.length; i++) {
    const s = shots[i];
    const lim = k * (a + (b * s.referenceM) / 1000);
    const rc = reflectanceIndex(s.reflectancePct, s.retro);
    const lb = illuminanceIndex(s.illuminanceKlux);
    const rb = rangeBandIndex(s.referenceM, edges);
    const key = `${s.sessionId}\u0000${s.excluded ? 1 : 0}|${rc}|${lb}|${rb}`;
    let g = groups.get(key);
    if (!g) {
      g = {
        sessionId: s.sessionId,
        sessionStartedAt: s.sessionStartedAt,
        excluded: !!s.excluded,
        reflectance: rc,
        illuminance: lb,
        rangeBand: rb,
        n: 0,
        within: 0,
        s1: 0,
        s2: 0,
        sq: 0,
        d1: 0,
        d2: 0,
        de: 0,
        sumD: 0,
        sumU2: 0,
        unknownU: 0,
        maxAbs: 0,
        sun: false,
        airDefaulted: false,
      };
      groups.set(key, g);
    }
    g.n++;
    if (s.excluded) continue;
    const err = s.errorMm;
    e[n++] = err;
    if (Math.abs(err) <= lim) g.within++;
    const x = err - kE;
    const y = s.referenceM - kD;
    g.s1 += x;
    g.s2 += x * x;
    g.sq += err * err;
    g.d1 += y;
    g.d2 += y * y;
    g.de += x * y;
    g.sumD += s.referenceM;
    const u = s.referenceUncertaintyMm;
    if (typeof u === "number" && Number.isFinite(u) && u >= 0) g.sumU2 += u * u;
    else g.unknownU++;
    const ae = Math.abs(err);
    if (ae > g.maxAbs) g.maxAbs = ae;
    if (s.illuminanceKlux != null && s.illuminanceKlux >= BRIGHT_SUN_KLUX) g.sun = true;
    if (s.airDefaulted) g.airDefaulted = true;
  }
  return { kE, kD, groups: [...groups.values()], sortedErrors: e.subarray(0, n).sort() };
}

/**
 * The k-th smallest (0-based) of |sᵢ − c| for s sorted ascending, without making that list
 * (issue 16: at a million shots sortedAbsDeviations allocates 8 MB a call). The values below c
 * and those at or above it are two sorted sequences of distances, c − s[p−1−i] and s[p+j] − c;
 * the k-th of their merge is found by bisection on how many come from the first. Each distance
 * is computed as sortedAbsDeviations computes it, so the result is the same number.
 */
export function kthAbsDeviation(s: Float64Array, c: number, k: number): number {
  const n = s.length;
  let p = 0;
  let hi0 = n;
  while (p < hi0) {
    const mid = (p + hi0) >> 1;
    if (s[mid] < c) p = mid + 1;
    else hi0 = mid;
  }
  const nA = p;
  const nB = n - p;
  const a = (i: number) => c - s[p - 1 - i];
  const b = (j: number) => s[p + j] - c;
  // i = how many of the k + 1 smallest come from the part below c
  let lo = Math.max(0, k + 1 - nB);
  let hi = Math.min(k + 1, nA);
  while (lo < hi) {
    const i = (lo + hi) >> 1;
    const j = k + 1 - i;
    if (j > 0 && a(i) < b(j - 1)) lo = i + 1;
    else hi = i;
  }
  const j = k + 1 - lo;
  return Math.max(lo > 0 ? a(lo - 1) : -Infinity, j > 0 ? b(j - 1) : -Infinity);
}

/** The type-7 quantile (as quantileType7Sorted) of |sᵢ − c|, from s sorted ascending. */
function absDeviationQuantile(s: Float64Array, c: number, p: number): number {
  const n = s.length;
  const h = (n - 1) * p;
  const lo = Math.floor(h);
  const hi = Math.min(lo + 1, n - 1);
  const x = kthAbsDeviation(s, c, lo);
  return x + (h - lo) * (kthAbsDeviation(s, c, hi) - x);
}

/** The outlier rule's median and MAD and the 95th percentile of |e|, of n included errors. */
export type OrderStatistics = { n: number; median: number; mad: number; p95Abs: number };

/** Median, MAD and the 95th percentile of |e| (type 7) from the included errors in ascending order. */
export function orderStatistics(sorted: Float64Array): { median: number; mad: number; p95Abs: number } | null {
  if (!sorted.length) return null;
  const median = quantileType7Sorted(sorted, 0.5);
  return {
    median,
    mad: absDeviationQuantile(sorted, median, 0.5),
    p95Abs: absDeviationQuantile(sorted, 0, 0.95),
  };
}
