// issue 16 (u16): the order statistics of the report without the |e − c| lists — the k-th
// smallest |sᵢ − c| by bisection over the two sorted halves (kthAbsDeviation). Checked against
// first principles: every |sᵢ − c| written out and sorted here, and the type-7 quantile of
// Hyndman & Fan (1996), Q(p) = x[⌊h⌋] + (h − ⌊h⌋)(x[⌊h⌋+1] − x[⌊h⌋]) with h = (n − 1)p, 0-based;
// the MAD is the median of the absolute deviations from the median (ranging.md §5 outlier rule).
import { expect, test } from "vitest";
import fc from "fast-check";
import { kthAbsDeviation, orderStatistics } from "./report-aggregates.ts";

/** Type-7 quantile of an ascending plain array, written out here (Hyndman & Fan 1996, definition 7). */
function type7(x: number[], p: number): number {
  const h = (x.length - 1) * p;
  const lo = Math.floor(h);
  const hi = Math.min(lo + 1, x.length - 1);
  return x[lo]! + (h - lo) * (x[hi]! - x[lo]!);
}
const asc = (x: number[]) => [...x].sort((a, b) => a - b);
const absFrom = (s: number[], c: number) => asc(s.map((v) => (v < c ? c - v : v - c)));

test("the k-th smallest |s − c| equals the brute-force sorted list at every k, with ties, c on a value, inside and outside", () => {
  const s = [-3, -1, -1, 0, 0.5, 0.5, 0.5, 2, 4, 4, 7.25];
  for (const c of [-10, -1, 0, 0.5, 1.2, 4, 20]) {
    const want = absFrom(s, c);
    for (let k = 0; k < s.length; k++) expect(kthAbsDeviation(Float64Array.from(s), c, k), `c = ${c}, k = ${k}`).toBe(want[k]);
  }
});

test("median, MAD and P95|e| by rank equal the sorted-list definitions (odd and even n, ties)", () => {
  // odd n = 7, worked by hand: median 2; |e − 2| = 1,1,0,0,1,3,8 → sorted 0,0,1,1,1,3,8 → MAD 1;
  // |e| = 1,1,2,2,3,5,10 → h = 6·0.95 = 5.7 → 5 + 0.7·(10 − 5) = 8.5
  const odd = orderStatistics(Float64Array.from([1, 1, 2, 2, 3, 5, 10]))!;
  expect([odd.median, odd.mad]).toEqual([2, 1]);
  expect(odd.p95Abs).toBeCloseTo(8.5, 12); // (n − 1)·0.95 is 5.699… in binary floating point
  // even n = 6: median (1 + 2)/2 = 1.5; |e − 1.5| = 2.5,0.5,0.5,0.5,0.5,2.5 → MAD 0.5;
  // |e| = 1,1,1,2,2,4 → h = 5·0.95 = 4.75 → 2 + 0.75·(4 − 2) = 3.5
  const even = orderStatistics(Float64Array.from([-1, 1, 1, 2, 2, 4]))!;
  expect([even.median, even.mad]).toEqual([1.5, 0.5]);
  expect(even.p95Abs).toBeCloseTo(3.5, 12);
  // random data with many ties (values on a 0.25 mm grid), n from 1 to 60
  fc.assert(
    fc.property(fc.array(fc.integer({ min: -40, max: 40 }), { minLength: 1, maxLength: 60 }), (ints) => {
      const e = asc(ints.map((i) => i / 4));
      const m = type7(e, 0.5);
      const got = orderStatistics(Float64Array.from(e))!;
      expect(got.median).toBe(m);
      expect(got.mad).toBe(type7(absFrom(e, m), 0.5));
      expect(got.p95Abs).toBe(type7(absFrom(e, 0), 0.95));
    }),
    { numRuns: 300 },
  );
});
