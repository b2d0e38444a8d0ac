import { expect, test } from "vitest";
import fc from "fast-check";
import { EigenvalueDecomposition, Matrix } from "ml-matrix";
import { symmetricEigen3, type Sym3 } from "./eigen3.ts";

// Checked against ml-matrix (a general-purpose numerical library from the npm registry): its
// EigenvalueDecomposition (the JAMA tridiagonal QL method) on the same matrices.
function reference(m: Sym3) {
  const A = new Matrix([
    [m[0], m[1], m[2]],
    [m[1], m[3], m[4]],
    [m[2], m[4], m[5]],
  ]);
  const e = new EigenvalueDecomposition(A, { assumeSymmetric: true });
  const order = [0, 1, 2].sort((i, j) => e.realEigenvalues[i] - e.realEigenvalues[j]);
  return { values: order.map((i) => e.realEigenvalues[i]), vectors: order.map((i) => e.eigenvectorMatrix.getColumn(i)) };
}

// values to 1e-6 between ±1000 (ml-matrix's QL trips over subnormal numbers, ours does not)
const sym = fc
  .array(
    fc.integer({ min: -1e9, max: 1e9 }).map((i) => i / 1e6),
    { minLength: 6, maxLength: 6 },
  )
  .map((a) => a as Sym3);

test("eigenvalues and eigenvectors agree with ml-matrix on random symmetric matrices", () => {
  fc.assert(
    fc.property(sym, (m) => {
      const ours = symmetricEigen3(m);
      const ref = reference(m);
      const scale = Math.max(1, ...m.map(Math.abs));
      for (let i = 0; i < 3; i++) expect(Math.abs(ours.values[i] - ref.values[i])).toBeLessThan(1e-10 * scale);
      // each eigenvector, where its eigenvalue is well separated, matches up to sign
      for (let i = 0; i < 3; i++) {
        const gap = Math.min(...[0, 1, 2].filter((j) => j !== i).map((j) => Math.abs(ref.values[i] - ref.values[j])));
        if (gap < 1e-6 * scale) continue;
        const d = Math.abs(ours.vectors[i][0] * ref.vectors[i][0] + ours.vectors[i][1] * ref.vectors[i][1] + ours.vectors[i][2] * ref.vectors[i][2]);
        expect(d).toBeGreaterThan(1 - 1e-9);
      }
    }),
    { numRuns: 500 },
  );
});

test("a covariance of a thin board: smallest eigenvalue 1e-6 beside spreads of 1e-2 (agrees with ml-matrix)", () => {
  // a board 0.3 m across with 1 mm of scatter, turned in space
  const c = Math.cos(0.7);
  const s = Math.sin(0.7);
  const R = new Matrix([
    [c, -s, 0],
    [s * 0.8, c * 0.8, -0.6],
    [s * 0.6, c * 0.6, 0.8],
  ]);
  const D = Matrix.diag([0.0075, 0.0074, 1e-6]);
  const A = R.mmul(D).mmul(R.transpose());
  const m: Sym3 = [A.get(0, 0), A.get(0, 1), A.get(0, 2), A.get(1, 1), A.get(1, 2), A.get(2, 2)];
  const ours = symmetricEigen3(m);
  const ref = reference(m);
  expect(ours.values[0]).toBeCloseTo(1e-6, 15);
  expect(ours.values[0]).toBeCloseTo(ref.values[0], 15);
  const n = R.getColumn(2);
  expect(Math.abs(ours.vectors[0][0] * n[0] + ours.vectors[0][1] * n[1] + ours.vectors[0][2] * n[2])).toBeCloseTo(1, 12);
});

test("diagonal and repeated eigenvalues", () => {
  const e = symmetricEigen3([3, 0, 0, 1, 0, 2]);
  expect(e.values).toEqual([1, 2, 3]);
  expect(Math.abs(e.vectors[0][1])).toBe(1);
  const iso = symmetricEigen3([2, 0, 0, 2, 0, 2]);
  expect(iso.values).toEqual([2, 2, 2]);
  expect(() => symmetricEigen3([NaN, 0, 0, 1, 0, 1])).toThrow(/finite/);
});
