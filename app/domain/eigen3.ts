// Eigen-decomposition of a real symmetric 3×3 matrix by the cyclic Jacobi method (Golub & Van
// Loan, Matrix Computations, §8.5): plane fits by total least squares (ranging.md §8) need the
// eigenvector of the smallest eigenvalue of a covariance. Jacobi is chosen over the closed
// (trigonometric) form because it stays accurate when two eigenvalues nearly coincide — the two
// in-plane spreads of a square board are close — and a 3×3 converges in a few sweeps.

export type Vec3 = [number, number, number];
/** Upper triangle of a symmetric matrix: [a00, a01, a02, a11, a12, a22]. */
export type Sym3 = [number, number, number, number, number, number];
export type Eigen3 = {
  /** Ascending. */
  values: Vec3;
  /** Unit eigenvectors, vectors[i] belonging to values[i]. */
  vectors: [Vec3, Vec3, Vec3];
};

const MAX_SWEEPS = 64;

export function symmetricEigen3(m: Sym3): Eigen3 {
  for (const x of m) if (!Number.isFinite(x)) throw new RangeError("the matrix must hold finite numbers");
  const a = [
    [m[0], m[1], m[2]],
    [m[1], m[3], m[4]],
    [m[2], m[4], m[5]],
  ];
  const v = [
    [1, 0, 0],
    [0, 1, 0],
    [0, 0, 1],
  ];
  for (let sweep = 0; sweep < MAX_SWEEPS; sweep++) {
    const off = Math.abs(a[0][1]) + Math.abs(a[0][2]) + Math.abs(a[1][2]);
    const diag = Math.abs(a[0][0]) + Math.abs(a[1][1]) + Math.abs(a[2][2]);
    if (off === 0 || off <= 1e-300 || off < Number.EPSILON * 1e-3 * diag) break;
    for (let p = 0; p < 2; p++) {
      for (let q = p + 1; q < 3; q++) {
        const apq = a[p][q];
        if (apq === 0) continue;
        // Rotation angle that zeroes a[p][q] (the smaller of the two solutions, for stability).
        const theta = (a[q][q] - a[p][p]) / (2 * apq);
        const t = Math.sign(theta || 1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
        const c = 1 / Math.sqrt(t * t + 1);
        const s = t * c;
        for (let k = 0; k < 3; k++) {
          const akp = a[k][p];
          const akq = a[k][q];
          a[k][p] = c * akp - s * akq;
          a[k][q] = s * akp + c * akq;
        }
        for (let k = 0; k < 3; k++) {
          const apk = a[p][k];
          const aqk = a[q][k];
          a[p][k] = c * apk - s * aqk;
          a[q][k] = s * apk + c * aqk;
        }
        for (let k = 0; k < 3; k++) {
          const vkp = v[k][p];
          const vkq = v[k][q];
          v[k][p] = c * vkp - s * vkq;
          v[k][q] = s * vkp + c * vkq;
        }
      }
    }
  }
  const order = [0, 1, 2].sort((i, j) => a[i][i] - a[j][j]);
  const col = (i: number): Vec3 => {
    const x: Vec3 = [v[0][i], v[1][i], v[2][i]];
    const n = Math.hypot(x[0], x[1], x[2]);
    return [x[0] / n, x[1] / n, x[2] / n];
  };
  return {
    values: [a[order[0]][order[0]], a[order[1]][order[1]], a[order[2]][order[2]]],
    vectors: [col(order[0]), col(order[1]), col(order[2])],
  };
}
