import { expect, test } from "vitest";
import jStat from "jstat";
import { chiSquareQuantile, normalQuantile, tQuantile } from "./quantiles.ts";
import { DomainError } from "./errors.ts";

const J = jStat as { studentt: { inv(p: number, df: number): number }; chisquare: { inv(p: number, df: number): number }; normal: { inv(p: number, m: number, s: number): number } };

test("t 0.975 quantiles match the NIST/SEMATECH table", () => {
  // NIST/SEMATECH e-Handbook of Statistical Methods, 1.3.6.7.2 (critical values of t), 3 decimals
  expect(tQuantile(0.975, 14)).toBeCloseTo(2.145, 3);
  expect(tQuantile(0.975, 19)).toBeCloseTo(2.093, 3);
  expect(tQuantile(0.975, 29)).toBeCloseTo(2.045, 3);
  expect(tQuantile(0.975, Infinity)).toBeCloseTo(1.96, 3);
});

test("χ² points at 14 df match the NIST/SEMATECH table", () => {
  // NIST/SEMATECH e-Handbook of Statistical Methods, 1.3.6.7.4 (critical values of χ²):
  // upper 5 % point 23.685, lower 5 % point 6.571 at ν = 14
  expect(chiSquareQuantile(0.95, 14)).toBeCloseTo(23.685, 3);
  expect(chiSquareQuantile(0.05, 14)).toBeCloseTo(6.571, 3);
});

test("t quantiles agree with jstat over df 1..200", () => {
  // general-purpose statistics library from the registry: jstat 1.9.6 studentt.inv
  const ps = [0.001, 0.01, 0.025, 0.05, 0.1, 0.3, 0.5, 0.7, 0.9, 0.95, 0.975, 0.99, 0.995, 0.999];
  for (let df = 1; df <= 200; df++) {
    for (const p of ps) {
      const mine = tQuantile(p, df);
      const ref = J.studentt.inv(p, df);
      expect(Math.abs(mine - ref)).toBeLessThanOrEqual(1e-6 * Math.max(1, Math.abs(ref)));
    }
  }
});

test("χ² quantiles agree with jstat over df 1..200", () => {
  // jstat 1.9.6 chisquare.inv
  const ps = [0.001, 0.01, 0.025, 0.05, 0.1, 0.3, 0.5, 0.7, 0.9, 0.95, 0.975, 0.99, 0.995, 0.999];
  for (let df = 1; df <= 200; df++) {
    for (const p of ps) {
      const mine = chiSquareQuantile(p, df);
      const ref = J.chisquare.inv(p, df);
      expect(Math.abs(mine - ref)).toBeLessThanOrEqual(1e-6 * Math.max(1e-3, Math.abs(ref)));
    }
  }
});

test("non-integer and large df, and the normal limit", () => {
  // jstat 1.9.6 for non-integer df; normal quantile vs jstat normal.inv
  expect(tQuantile(0.975, 2.5)).toBeCloseTo(J.studentt.inv(0.975, 2.5), 6);
  expect(chiSquareQuantile(0.95, 7.5)).toBeCloseTo(J.chisquare.inv(0.95, 7.5), 6);
  expect(tQuantile(0.975, 1e6)).toBeCloseTo(1.959966, 5); // t → z as df → ∞ (any table)
  expect(chiSquareQuantile(0.95, 1000)).toBeCloseTo(J.chisquare.inv(0.95, 1000), 4);
  for (const p of [1e-8, 0.001, 0.02, 0.3, 0.5, 0.8, 0.99, 0.999999]) {
    expect(normalQuantile(p)).toBeCloseTo(J.normal.inv(p, 0, 1), 7);
  }
  // symmetry of t (definition)
  expect(tQuantile(0.025, 14)).toBeCloseTo(-tQuantile(0.975, 14), 12);
  expect(tQuantile(0.5, 3)).toBe(0);
});

test("quantile functions reject impossible arguments", () => {
  for (const [p, df] of [
    [0, 5],
    [1, 5],
    [NaN, 5],
    [0.5, 0],
    [0.5, -1],
    [0.5, NaN],
  ]) {
    expect(() => tQuantile(p, df)).toThrow(DomainError);
    expect(() => chiSquareQuantile(p, df)).toThrow(DomainError);
  }
  expect(() => chiSquareQuantile(0.5, Infinity)).toThrow(DomainError);
});
