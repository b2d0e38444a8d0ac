// Drift of a sensor's bias across sessions (issue 15, sensor history). Two published, simple
// signals, each on its own:
// - Trend: ordinary least squares of session bias on session time, the slope's t statistic
//   t = b / SE(b) with ν = n − 2, significant when |t| > t₀.₉₇₅(ν) (the test for a zero slope,
//   NIST/SEMATECH e-Handbook of Statistical Methods §4.2.2 / any regression text).
// - Run: six sessions in a row steadily increasing or decreasing (Nelson's test 3, L. S. Nelson,
//   "The Shewhart Control Chart — Tests for Special Causes", J. Quality Technology 16(4), 1984);
//   equal neighbours break a run.
// Sessions without a bias (no included shots) are left out of both.
import { olsFit } from "./stats.ts";
import { tQuantile } from "./quantiles.ts";

export const DRIFT_RUN_LENGTH = 6;
const YEAR_MS = 365.25 * 86_400_000;

export type BiasDrift = {
  /** Sessions with a bias. */
  n: number;
  /** Trend of the bias (mm per year); null with fewer than 3 sessions or all on one instant. */
  slopeMmPerYear: number | null;
  slopeSeMmPerYear: number | null;
  t: number | null;
  df: number | null;
  /** |t| > t₀.₉₇₅(ν); null when there is no trend figure. */
  trendSignificant: boolean | null;
  /** The fitted line at the first and last session (for the chart). */
  line: { startedAt: string; biasMm: number }[] | null;
  /** Indices (into the input) of sessions in a run of six or more moving one way. */
  runIndices: number[];
  /** Direction of the latest such run. */
  runDirection: "up" | "down" | null;
};

export function biasDrift(sessions: readonly { startedAt: string; biasMm: number | null }[]): BiasDrift {
  const idx: number[] = [];
  const t: number[] = [];
  const y: number[] = [];
  sessions.forEach((s, i) => {
    const ms = Date.parse(s.startedAt);
    if (s.biasMm == null || !Number.isFinite(s.biasMm) || !Number.isFinite(ms)) return;
    idx.push(i);
    t.push(ms);
    y.push(s.biasMm);
  });
  // time in years from the first session keeps the regression well conditioned
  const t0 = t.length ? Math.min(...t) : 0;
  const x = t.map((ms) => (ms - t0) / YEAR_MS);
  const fit = olsFit(x, y, "sessions");
  let tStat: number | null = null;
  let significant: boolean | null = null;
  let df: number | null = null;
  let line: BiasDrift["line"] = null;
  if (fit) {
    df = fit.n - 2;
    if (fit.slopeSe > 0) {
      tStat = fit.slope / fit.slopeSe;
      significant = Math.abs(tStat) > tQuantile(0.975, df);
    } else significant = fit.slope !== 0; // the biases lie exactly on a sloped line
    const first = idx[x.indexOf(Math.min(...x))];
    const last = idx[x.indexOf(Math.max(...x))];
    line = [first, last].map((i) => ({ startedAt: sessions[i].startedAt, biasMm: fit.intercept + fit.slope * ((Date.parse(sessions[i].startedAt) - t0) / YEAR_MS) }));
  }
  // Nelson's test 3 over the sessions in time order
  const order = idx.map((_, k) => k).sort((a, b) => t[a] - t[b]);
  const runIndices = new Set<number>();
  let runDirection: BiasDrift["runDirection"] = null;
  let start = 0;
  let dir = 0;
  for (let k = 1; k <= order.length; k++) {
    const d = k < order.length ? Math.sign(y[order[k]] - y[order[k - 1]]) : 0;
    if (k < order.length && d !== 0 && d === dir) continue;
    // the run from start to k − 1 ends here
    if (dir !== 0 && k - start >= DRIFT_RUN_LENGTH) {
      for (let j = start; j < k; j++) runIndices.add(idx[order[j]]);
      runDirection = dir > 0 ? "up" : "down";
    }
    start = k - 1;
    dir = d;
  }
  return {
    n: idx.length,
    slopeMmPerYear: fit ? fit.slope : null,
    slopeSeMmPerYear: fit ? fit.slopeSe : null,
    t: tStat,
    df,
    trendSignificant: significant,
    line,
    runIndices: [...runIndices].sort((a, b) => a - b),
    runDirection,
  };
}
