import { expect, test } from "vitest";
import fc from "fast-check";
import { mad, mean, median, olsFit, quantileType7, rmse, sampleSd } from "./stats.ts";
import { DomainError } from "./errors.ts";

test("NSSDA worked example: RMSE and 95 % accuracy from mean and SD", () => {
  // FGDC-STD-007.3-1998 (NSSDA) vertical accuracy summary: n = 51, mean −0.005333 m,
  // SD 0.057721 m → RMSE_z 0.057400 m, Accuracy_z = 1.9600·RMSE_z = 0.112504 m
  const n = 51;
  const m = -0.005333;
  const s = 0.057721;
  const r = Math.sqrt(m * m + ((n - 1) / n) * s * s);
  // the published inputs are rounded to 6 decimals, so agreement is to about 1e-6
  expect(Math.abs(r - 0.0574)).toBeLessThan(1e-6);
  expect(Math.abs(1.96 * r - 0.112504)).toBeLessThan(2e-6);
  expect(1.96 * 0.0574).toBeCloseTo(0.112504, 9); // Accuracy_z = 1.9600·RMSE_z as published
  // a synthetic data set with exactly that mean and SD gives the same through rmse()
  const z = Array.from({ length: n }, (_, i) => Math.sin(i * 1.7) + Math.cos(i * 0.3));
  const zm = mean(z);
  const zs = sampleSd(z)!;
  const data = z.map((v) => m + ((v - zm) / zs) * s);
  expect(mean(data)).toBeCloseTo(m, 12);
  expect(sampleSd(data)!).toBeCloseTo(s, 12);
  expect(Math.abs(rmse(data) - 0.0574)).toBeLessThan(1e-6);
  expect(Math.abs(1.96 * rmse(data) - 0.112504)).toBeLessThan(2e-6);
});

test("type-7 quantile, median and MAD", () => {
  // Hyndman & Fan (1996) type 7 = R's default quantile(): quantile(1:10, .95) = 9.55
  expect(quantileType7([1, 2, 3, 4, 5, 6, 7, 8, 9, 10], 0.95)).toBeCloseTo(9.55, 12);
  expect(quantileType7([3, 1, 2], 0.5)).toBe(2); // unsorted input is sorted first
  expect(quantileType7([5], 0.95)).toBe(5);
  expect(median([4, 1, 3, 2])).toBe(2.5);
  // R: mad(c(1,2,3,4,100), constant = 1) = 1
  expect(mad([1, 2, 3, 4, 100])).toBe(1);
});

test("OLS fit with standard errors and R²", () => {
  // computed here from the definitions: y = 1 + 2x exactly → slope 2, intercept 1, SE 0, R² 1
  const f = olsFit([1, 2, 3, 4], [3, 5, 7, 9])!;
  expect(f.slope).toBeCloseTo(2, 12);
  expect(f.intercept).toBeCloseTo(1, 12);
  expect(f.slopeSe).toBeCloseTo(0, 12);
  expect(f.rSquared).toBeCloseTo(1, 12);
  // textbook small example: x = 1..5, y = 2,4,5,4,5 → slope 0.6, intercept 2.2, R² 0.6,
  // s² = 2.4/3 = 0.8, SE(slope) = √(0.8/10), SE(intercept) = √(0.8·(1/5 + 9/10))
  const g = olsFit([1, 2, 3, 4, 5], [2, 4, 5, 4, 5])!;
  expect(g.slope).toBeCloseTo(0.6, 12);
  expect(g.intercept).toBeCloseTo(2.2, 12);
  expect(g.rSquared).toBeCloseTo(0.6, 12);
  expect(g.slopeSe).toBeCloseTo(Math.sqrt(0.08), 12);
  expect(g.interceptSe).toBeCloseTo(Math.sqrt(0.8 * 1.1), 12);
  // needs n ≥ 3 and two distinct x
  expect(olsFit([1, 2], [1, 2])).toBeNull();
  expect(olsFit([5, 5, 5], [1, 2, 3])).toBeNull();
  expect(olsFit([1, 2, 3], [4, 4, 4])!.rSquared).toBeNull();
});

test("statistics reject empty and non-finite input; SD of one value is null", () => {
  expect(() => mean([])).toThrow(DomainError);
  expect(() => rmse([])).toThrow(DomainError);
  expect(() => median([])).toThrow(DomainError);
  expect(() => mean([1, NaN])).toThrowError(expect.objectContaining({ path: "values.1" }));
  expect(() => quantileType7([1], 1.5)).toThrow(DomainError);
  expect(() => olsFit([1, 2, 3], [1, 2])).toThrow(DomainError);
  expect(sampleSd([3])).toBeNull();
});

const arr = fc.array(fc.double({ min: -1000, max: 1000, noNaN: true }), { minLength: 2, maxLength: 60 });

test("property: RMSE² = bias² + (n−1)/n·SD²", () => {
  // algebraic identity of the definitions (ranging.md §5 / NSSDA)
  fc.assert(
    fc.property(arr, (v) => {
      const n = v.length;
      const lhs = rmse(v) ** 2;
      const rhs = mean(v) ** 2 + ((n - 1) / n) * sampleSd(v)! ** 2;
      expect(Math.abs(lhs - rhs)).toBeLessThanOrEqual(1e-9 * Math.max(1, lhs));
    }),
  );
});

test("property: statistics are invariant to order", () => {
  fc.assert(
    fc.property(arr, fc.integer(), (v, seed) => {
      const w = [...v];
      let s = seed >>> 0;
      for (let i = w.length - 1; i > 0; i--) {
        s = (s * 1103515245 + 12345) >>> 0;
        const j = s % (i + 1);
        [w[i], w[j]] = [w[j], w[i]];
      }
      const tol = (x: number) => 1e-9 * Math.max(1, Math.abs(x));
      expect(Math.abs(mean(w) - mean(v))).toBeLessThanOrEqual(tol(mean(v)));
      expect(Math.abs(sampleSd(w)! - sampleSd(v)!)).toBeLessThanOrEqual(tol(sampleSd(v)!));
      expect(median(w)).toBe(median(v));
      expect(mad(w)).toBe(mad(v));
      expect(quantileType7(w.map(Math.abs), 0.95)).toBe(quantileType7(v.map(Math.abs), 0.95));
    }),
  );
});
