import { expect, test } from "vitest";
import { Matrix, inverse, solve } from "ml-matrix";
import jStat from "jstat";
import { biasDrift } from "./drift.ts";

const J = jStat as { studentt: { inv(p: number, df: number): number } };
const YEAR_MS = 365.25 * 86_400_000;
const at = (years: number) => new Date(Date.UTC(2025, 0, 6, 8) + years * YEAR_MS).toISOString();

test("trend: a hand-worked case (biases 0, 1, 2, 4 mm a year apart)", () => {
  // Sxx = 5, Sxy = 6.5 → b = 1.3 mm/yr; SSE = 0.30, s² = 0.15, SE(b) = √(0.15/5) = 0.1732;
  // t = 7.506 > t₀.₉₇₅(2) = 4.303 (NIST/SEMATECH e-Handbook 1.3.6.7.2)
  const d = biasDrift([0, 1, 2, 4].map((b, i) => ({ startedAt: at(i), biasMm: b })));
  expect(d.slopeMmPerYear).toBeCloseTo(1.3, 9);
  expect(d.slopeSeMmPerYear).toBeCloseTo(Math.sqrt(0.03), 9);
  expect(d.t).toBeCloseTo(1.3 / Math.sqrt(0.03), 6);
  expect(d.df).toBe(2);
  expect(d.trendSignificant).toBe(true);
  expect(d.line).toEqual([
    { startedAt: at(0), biasMm: expect.closeTo(-0.2, 9) },
    { startedAt: at(3), biasMm: expect.closeTo(3.7, 9) },
  ]);
  expect(d.runIndices).toEqual([]); // four sessions are no run of six
});

test("trend agrees with least squares by ml-matrix and the t quantile of jStat (general-purpose libraries)", () => {
  // irregular dates and noisy biases; a session without shots is left out
  const days = [0, 17, 40, 41, 95, 130, 188, 260, 300, 365, 420];
  const bias = [0.4, -0.3, 0.9, 0.2, 0.7, 1.6, 0.8, 1.9, 1.1, 2.4, 1.7];
  const sessions = days.map((d, i) => ({ startedAt: new Date(Date.UTC(2025, 2, 1) + d * 86_400_000).toISOString(), biasMm: bias[i] as number | null }));
  sessions.splice(4, 0, { startedAt: new Date(Date.UTC(2025, 3, 1)).toISOString(), biasMm: null });
  const d = biasDrift(sessions);
  const x = days.map((v) => (v * 86_400_000) / YEAR_MS);
  const X = new Matrix(x.map((v) => [1, v]));
  const Y = Matrix.columnVector(bias);
  const beta = solve(X, Y);
  const resid = Y.clone().sub(X.mmul(beta));
  const s2 = resid.transpose().mmul(resid).get(0, 0) / (x.length - 2);
  const se = Math.sqrt(s2 * inverse(X.transpose().mmul(X)).get(1, 1));
  expect(d.n).toBe(11);
  expect(d.slopeMmPerYear).toBeCloseTo(beta.get(1, 0), 9);
  expect(d.slopeSeMmPerYear).toBeCloseTo(se, 9);
  expect(d.t).toBeCloseTo(beta.get(1, 0) / se, 6);
  expect(d.trendSignificant).toBe(Math.abs(beta.get(1, 0) / se) > J.studentt.inv(0.975, 9));
  expect(d.trendSignificant).toBe(true);
  // flat, noisy biases: no significant trend
  const flat = biasDrift(days.map((v, i) => ({ startedAt: new Date(Date.UTC(2025, 2, 1) + v * 86_400_000).toISOString(), biasMm: [0.3, -0.2, 0.1, -0.4, 0.2, 0.0, -0.1, 0.3, -0.3, 0.1, -0.1][i] })));
  expect(flat.trendSignificant).toBe(false);
});

test("run: six sessions in a row moving one way are marked (Nelson's test 3); five are not; a tie breaks a run", () => {
  const mk = (b: number[]) => b.map((v, i) => ({ startedAt: at(i / 12), biasMm: v }));
  expect(biasDrift(mk([0.5, 0.1, 0.2, 0.3, 0.4, 0.6, 0.9, 0.2])).runIndices).toEqual([1, 2, 3, 4, 5, 6]);
  expect(biasDrift(mk([0.5, 0.1, 0.2, 0.3, 0.4, 0.6, 0.9, 0.2])).runDirection).toBe("up");
  expect(biasDrift(mk([0.5, 0.1, 0.2, 0.3, 0.4, 0.6, 0.2])).runIndices).toEqual([]);
  expect(biasDrift(mk([3, 2, 1, 0, -1, -2])).runDirection).toBe("down");
  expect(biasDrift(mk([3, 2, 1, 0, -1, -2])).runIndices).toEqual([0, 1, 2, 3, 4, 5]);
  expect(biasDrift(mk([0.1, 0.2, 0.3, 0.3, 0.4, 0.5, 0.6])).runIndices).toEqual([]);
  // a session without a bias is skipped, not a break
  const withGap = mk([0.1, 0.2, 0.3, 0.4, 0.5, 0.6]);
  withGap.splice(3, 0, { startedAt: at(2.5 / 12), biasMm: null as unknown as number });
  expect(biasDrift(withGap).runIndices).toEqual([0, 1, 2, 4, 5, 6]);
});

test("too few sessions: no trend figures (null), never a made-up 0", () => {
  const d = biasDrift([
    { startedAt: at(0), biasMm: 1 },
    { startedAt: at(1), biasMm: 2 },
  ]);
  expect(d).toMatchObject({ n: 2, slopeMmPerYear: null, t: null, df: null, trendSignificant: null, line: null, runIndices: [] });
});
