// Quantiles of Student's t and χ², written here: log-gamma by Lanczos (g = 7, n = 9), the
// regularized incomplete beta by its continued fraction (modified Lentz) and the regularized
// incomplete gamma by series / continued fraction (Numerical Recipes, ch. 6; Abramowitz &
// Stegun 26.5.8, 6.5.29), inverted by safeguarded Newton (bisection on a bracket). The normal
// quantile (df = ∞) is Acklam's rational approximation refined by one Halley step.
import { DomainError } from "./errors.ts";

const LANCZOS = [
  0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313, -176.61502916214059, 12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7,
];

export function logGamma(x: number): number {
  if (x < 0.5) return Math.log(Math.PI / Math.abs(Math.sin(Math.PI * x))) - logGamma(1 - x);
  x -= 1;
  let a = LANCZOS[0];
  const t = x + 7.5;
  for (let i = 1; i < 9; i++) a += LANCZOS[i] / (x + i);
  return 0.5 * Math.log(2 * Math.PI) + (x + 0.5) * Math.log(t) - t + Math.log(a);
}

const EPS = 1e-15;
const TINY = 1e-300;

function betaCf(a: number, b: number, x: number): number {
  const qab = a + b;
  const qap = a + 1;
  const qam = a - 1;
  let c = 1;
  let d = 1 - (qab * x) / qap;
  if (Math.abs(d) < TINY) d = TINY;
  d = 1 / d;
  let h = d;
  for (let m = 1; m <= 100000; m++) {
    const m2 = 2 * m;
    let aa = (m * (b - m) * x) / ((qam + m2) * (a + m2));
    d = 1 + aa * d;
    if (Math.abs(d) < TINY) d = TINY;
    c = 1 + aa / c;
    if (Math.abs(c) < TINY) c = TINY;
    d = 1 / d;
    h *= d * c;
    aa = (-(a + m) * (qab + m) * x) / ((a + m2) * (qap + m2));
    d = 1 + aa * d;
    if (Math.abs(d) < TINY) d = TINY;
    c = 1 + aa / c;
    if (Math.abs(c) < TINY) c = TINY;
    d = 1 / d;
    const del = d * c;
    h *= del;
    if (Math.abs(del - 1) < EPS) break;
  }
  return h;
}

/** Regularized incomplete beta I_x(a, b). */
export function incompleteBeta(x: number, a: number, b: number): number {
  if (x <= 0) return 0;
  if (x >= 1) return 1;
  const lbt = logGamma(a + b) - logGamma(a) - logGamma(b) + a * Math.log(x) + b * Math.log1p(-x);
  if (x < (a + 1) / (a + b + 2)) return (Math.exp(lbt) * betaCf(a, b, x)) / a;
  return 1 - (Math.exp(lbt) * betaCf(b, a, 1 - x)) / b;
}

/** Regularized lower and upper incomplete gamma P(a, x), Q(a, x). */
export function incompleteGamma(a: number, x: number): { p: number; q: number } {
  if (x <= 0) return { p: 0, q: 1 };
  const lg = -x + a * Math.log(x) - logGamma(a);
  if (x < a + 1) {
    let ap = a;
    let del = 1 / a;
    let sum = del;
    for (let n = 0; n < 100000; n++) {
      ap += 1;
      del *= x / ap;
      sum += del;
      if (Math.abs(del) < Math.abs(sum) * EPS) break;
    }
    const p = sum * Math.exp(lg);
    return { p, q: 1 - p };
  }
  let b = x + 1 - a;
  let c = 1 / TINY;
  let d = 1 / b;
  let h = d;
  for (let i = 1; i <= 100000; i++) {
    const an = -i * (i - a);
    b += 2;
    d = an * d + b;
    if (Math.abs(d) < TINY) d = TINY;
    c = b + an / c;
    if (Math.abs(c) < TINY) c = TINY;
    d = 1 / d;
    const del = d * c;
    h *= del;
    if (Math.abs(del - 1) < EPS) break;
  }
  const q = Math.exp(lg) * h;
  return { p: 1 - q, q };
}

function checkP(p: number): void {
  if (typeof p !== "number" || !(p > 0 && p < 1)) throw new DomainError("p", "out_of_range", `probability must lie strictly between 0 and 1 (got ${p})`);
}
function checkDf(df: number): void {
  if (typeof df !== "number" || Number.isNaN(df) || !(df > 0)) throw new DomainError("df", "not_positive", `degrees of freedom must be greater than zero (got ${df})`);
}

/** Standard normal quantile. */
export function normalQuantile(p: number): number {
  checkP(p);
  const a = [-3.969683028665376e1, 2.209460984245205e2, -2.759285104469687e2, 1.38357751867269e2, -3.066479806614716e1, 2.506628277459239];
  const b = [-5.447609879822406e1, 1.615858368580409e2, -1.556989798598866e2, 6.680131188771972e1, -1.328068155288572e1];
  const c = [-7.784894002430293e-3, -3.223964580411365e-1, -2.400758277161838, -2.549732539343734, 4.374664141464968, 2.938163982698783];
  const d = [7.784695709041462e-3, 3.224671290700398e-1, 2.445134137142996, 3.754408661907416];
  const pl = 0.02425;
  let x: number;
  if (p < pl) {
    const q = Math.sqrt(-2 * Math.log(p));
    x = (((((c[0] * q + c[1]) * q + c[2]) * q + c[3]) * q + c[4]) * q + c[5]) / ((((d[0] * q + d[1]) * q + d[2]) * q + d[3]) * q + 1);
  } else if (p <= 1 - pl) {
    const q = p - 0.5;
    const r = q * q;
    x = ((((((a[0] * r + a[1]) * r + a[2]) * r + a[3]) * r + a[4]) * r + a[5]) * q) / (((((b[0] * r + b[1]) * r + b[2]) * r + b[3]) * r + b[4]) * r + 1);
  } else {
    const q = Math.sqrt(-2 * Math.log(1 - p));
    x = -(((((c[0] * q + c[1]) * q + c[2]) * q + c[3]) * q + c[4]) * q + c[5]) / ((((d[0] * q + d[1]) * q + d[2]) * q + d[3]) * q + 1);
  }
  // one Halley step on Φ(x) − p, Φ via the incomplete gamma: erfc(z) = Q(1/2, z²)
  const z = x / Math.SQRT2;
  const erfcAbs = incompleteGamma(0.5, z * z).q;
  const cdf = z >= 0 ? 1 - 0.5 * erfcAbs : 0.5 * erfcAbs;
  const e = cdf - p;
  const u = e * Math.sqrt(2 * Math.PI) * Math.exp((x * x) / 2);
  return x - u / (1 + (x * u) / 2);
}

/**
 * Root of a monotone increasing g on [lo, hi] (g(lo) < 0 < g(hi)) by Newton steps that stay
 * inside the shrinking bracket, bisection otherwise.
 */
function solve(g: (x: number) => number, dg: (x: number) => number, lo: number, hi: number, x0: number): number {
  let x = Math.min(Math.max(x0, lo), hi);
  if (!(x > lo && x < hi)) x = (lo + hi) / 2;
  for (let i = 0; i < 500; i++) {
    const gx = g(x);
    if (gx === 0) return x;
    if (gx < 0) lo = x;
    else hi = x;
    const slope = dg(x);
    let nx = x - gx / slope;
    if (!(nx > lo && nx < hi) || !Number.isFinite(nx)) nx = (lo + hi) / 2;
    if (Math.abs(nx - x) <= 1e-14 * Math.max(1, Math.abs(x)) || hi - lo <= 1e-15 * Math.max(1, Math.abs(x))) return nx;
    x = nx;
  }
  return x;
}

/** Above this many degrees of freedom the t quantile is the normal one (difference < 1e-9). */
const T_NORMAL_DF = 1e10;

/** Quantile of Student's t with df degrees of freedom (df = Infinity gives the normal). */
export function tQuantile(p: number, df: number): number {
  checkP(p);
  checkDf(df);
  if (df >= T_NORMAL_DF) return normalQuantile(p);
  if (p === 0.5) return 0;
  if (p < 0.5) return -tQuantile(1 - p, df);
  const tail = 1 - p; // upper tail probability
  const lnc = logGamma((df + 1) / 2) - logGamma(df / 2) - 0.5 * Math.log(df * Math.PI);
  const pdf = (t: number) => Math.exp(lnc - ((df + 1) / 2) * Math.log1p((t * t) / df));
  // upper tail S(t) = ½·I_{df/(df+t²)}(df/2, 1/2); solve g(t) = tail − S(t) = 0 (increasing)
  const upper = (t: number) => 0.5 * incompleteBeta(df / (df + t * t), df / 2, 0.5);
  const g = (t: number) => tail - upper(t);
  let hi = Math.max(2, Math.abs(normalQuantile(p)) * 2);
  while (g(hi) < 0) hi *= 4;
  const z = normalQuantile(p);
  // Cornish–Fisher start (A&S 26.7.5, first terms)
  const x0 = z + (z ** 3 + z) / (4 * df) + (5 * z ** 5 + 16 * z ** 3 + 3 * z) / (96 * df * df);
  return solve(g, pdf, 0, hi, x0);
}

/** Quantile (lower-tail probability p) of χ² with df degrees of freedom; χ²₀.₉₅ is the upper 5 % point. */
export function chiSquareQuantile(p: number, df: number): number {
  checkP(p);
  checkDf(df);
  if (!Number.isFinite(df)) throw new DomainError("df", "not_finite", "degrees of freedom must be finite");
  const a = df / 2;
  const lnc = -a * Math.LN2 - logGamma(a);
  const pdf = (x: number) => Math.exp(lnc + (a - 1) * Math.log(x) - x / 2);
  // work in the smaller tail for precision
  const g = p <= 0.5 ? (x: number) => incompleteGamma(a, x / 2).p - p : (x: number) => 1 - p - incompleteGamma(a, x / 2).q;
  // Wilson–Hilferty start
  const z = normalQuantile(p);
  const h = 2 / (9 * df);
  const wh = df * (1 - h + z * Math.sqrt(h)) ** 3;
  let hi = Math.max(wh, df, 1) * 2;
  while (g(hi) < 0) hi *= 2;
  const x0 = wh > 0 ? wh : hi / 4;
  return solve(g, pdf, 0, hi, x0);
}
