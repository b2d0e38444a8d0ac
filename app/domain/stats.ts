// Descriptive statistics: mean, sample SD (n − 1), RMSE, Hyndman & Fan (1996, The American
// Statistician 50) type-7 quantile, median, MAD, and ordinary least squares y = a + b·x with
// standard errors from the residual variance Σr²/(n − 2) (any regression text).
import { DomainError, requireFiniteList } from "./errors.ts";

type Num = ArrayLike<number>;

function check(values: Num, path: string): void {
  if (!values || values.length === 0) throw new DomainError(path, "empty", "the list of values must not be empty");
  if (Array.isArray(values)) requireFiniteList(values, path, "values");
  else for (let i = 0; i < values.length; i++) if (!Number.isFinite(values[i])) throw new DomainError(`${path}.${i}`, "not_finite", `value ${i} is not a finite number`);
}

export function mean(values: Num, path = "values"): number {
  check(values, path);
  let s = 0;
  for (let i = 0; i < values.length; i++) s += values[i];
  return s / values.length;
}

/** Sample standard deviation (divisor n − 1); null for a single value. Two-pass for accuracy. */
export function sampleSd(values: Num, path = "values"): number | null {
  const m = mean(values, path);
  if (values.length < 2) return null;
  let ss = 0;
  for (let i = 0; i < values.length; i++) {
    const d = values[i] - m;
    ss += d * d;
  }
  return Math.sqrt(ss / (values.length - 1));
}

/** Root mean square √(Σx²/n). */
export function rmse(values: Num, path = "values"): number {
  check(values, path);
  let s = 0;
  for (let i = 0; i < values.length; i++) s += values[i] * values[i];
  return Math.sqrt(s / values.length);
}

/** Type-7 quantile of values already sorted ascending (no checks; for hot paths). */
export function quantileType7Sorted(sorted: Num, p: number): number {
  const n = sorted.length;
  const h = (n - 1) * p;
  const lo = Math.floor(h);
  const hi = Math.min(lo + 1, n - 1);
  return sorted[lo] + (h - lo) * (sorted[hi] - sorted[lo]);
}

/** Hyndman–Fan type-7 quantile (linear interpolation between order statistics), 0 ≤ p ≤ 1. */
export function quantileType7(values: Num, p: number, path = "values"): number {
  check(values, path);
  if (!(p >= 0 && p <= 1)) throw new DomainError("p", "out_of_range", `probability must lie between 0 and 1 (got ${p})`);
  const s = Float64Array.from(values as ArrayLike<number>).sort();
  return quantileType7Sorted(s, p);
}

export function median(values: Num, path = "values"): number {
  return quantileType7(values, 0.5, path);
}

/** Median absolute deviation from the median (raw; multiply by 1.4826 for a normal σ). */
export function mad(values: Num, path = "values"): number {
  const m = median(values, path);
  const d = new Float64Array(values.length);
  for (let i = 0; i < values.length; i++) d[i] = Math.abs(values[i] - m);
  d.sort();
  return quantileType7Sorted(d, 0.5);
}

export type OlsFit = { intercept: number; slope: number; interceptSe: number; slopeSe: number; rSquared: number | null; n: number };

/**
 * Ordinary least squares y = a + b·x. Null when n < 3 or the x do not take two distinct
 * values. rSquared is null when the y do not vary.
 */
export function olsFit(x: Num, y: Num, path = "values"): OlsFit | null {
  check(x, `${path}.x`);
  check(y, `${path}.y`);
  const n = x.length;
  if (y.length !== n) throw new DomainError(path, "length_mismatch", `x and y differ in length (${n} vs ${y.length})`);
  if (n < 3) return null;
  let mx = 0;
  let my = 0;
  for (let i = 0; i < n; i++) {
    mx += x[i];
    my += y[i];
  }
  mx /= n;
  my /= n;
  let sxx = 0;
  let sxy = 0;
  let syy = 0;
  for (let i = 0; i < n; i++) {
    const dx = x[i] - mx;
    const dy = y[i] - my;
    sxx += dx * dx;
    sxy += dx * dy;
    syy += dy * dy;
  }
  const scale = Math.max(1, Math.abs(mx));
  if (!(sxx > 1e-24 * scale * scale * n)) return null;
  const slope = sxy / sxx;
  const intercept = my - slope * mx;
  let sse = 0;
  for (let i = 0; i < n; i++) {
    const r = y[i] - intercept - slope * x[i];
    sse += r * r;
  }
  const s2 = sse / (n - 2);
  const slopeSe = Math.sqrt(s2 / sxx);
  const interceptSe = Math.sqrt(s2 * (1 / n + (mx * mx) / sxx));
  const rSquared = syy > 0 ? Math.max(0, Math.min(1, 1 - sse / syy)) : null;
  return { intercept, slope, interceptSe, slopeSe, rSquared, n };
}
