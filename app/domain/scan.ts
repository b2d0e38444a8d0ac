// Check-shots from point clouds (ranging.md §8): one pass over the points keeps, per target,
// the moments of the points within the search radius of its surveyed centre T; a plane by total
// least squares (the smallest-eigenvalue eigenvector of their covariance, through the centroid
// C); the range from the station origin O along the ray u = (T − O)/|T − O| to that plane,
// R = n·(C − O)/(n·u), and the incidence angle acos(|n·u|).
//
// Precision (ranging.md §8): callers hand in coordinates already relative to O (metres, double
// precision); each target's sums are kept relative to its own T, so the second moments of a
// board 0.3 m across never lose digits to grid coordinates of thousands of metres.
import { symmetricEigen3, type Vec3 } from "./eigen3.ts";

export const DEFAULT_SEARCH_RADIUS_M = 0.3;
export const DEFAULT_MIN_POINTS = 50;
/** Points kept per target for its plot (a uniform sample once more are seen). */
export const PLOT_SAMPLE = 1500;

/** Sums of one point set relative to a fixed origin P: n, Σd, Σd·dᵀ (d = point − P). */
export type Moments = { n: number; s: Vec3; ss: [number, number, number, number, number, number] };

export type PlaneFit = {
  /** Number of points. */
  points: number;
  /** Centroid relative to the moments' origin P (m). */
  centroid: Vec3;
  /** Unit normal (sign arbitrary). */
  normal: Vec3;
  /** Two unit in-plane axes (largest spread first), for plots. */
  axes: [Vec3, Vec3];
  /** √(smallest eigenvalue) · 1000: RMS of the points' distances to the plane (mm). */
  planeRmsMm: number;
};

export const emptyMoments = (): Moments => ({ n: 0, s: [0, 0, 0], ss: [0, 0, 0, 0, 0, 0] });

export function addToMoments(m: Moments, x: number, y: number, z: number): void {
  m.n++;
  m.s[0] += x;
  m.s[1] += y;
  m.s[2] += z;
  m.ss[0] += x * x;
  m.ss[1] += x * y;
  m.ss[2] += x * z;
  m.ss[3] += y * y;
  m.ss[4] += y * z;
  m.ss[5] += z * z;
}

/** Plane by total least squares from moments (population covariance, 1/n). Needs n ≥ 3. */
export function planeFromMoments(m: Moments): PlaneFit {
  const n = m.n;
  if (n < 3) throw new RangeError(`a plane needs at least 3 points (got ${n})`);
  const c: Vec3 = [m.s[0] / n, m.s[1] / n, m.s[2] / n];
  const cov: [number, number, number, number, number, number] = [
    m.ss[0] / n - c[0] * c[0],
    m.ss[1] / n - c[0] * c[1],
    m.ss[2] / n - c[0] * c[2],
    m.ss[3] / n - c[1] * c[1],
    m.ss[4] / n - c[1] * c[2],
    m.ss[5] / n - c[2] * c[2],
  ];
  const e = symmetricEigen3(cov);
  // rounding can leave a tiny negative variance for points exactly on a plane
  const smallest = Math.max(0, e.values[0]);
  return { points: n, centroid: c, normal: e.vectors[0], axes: [e.vectors[2], e.vectors[1]], planeRmsMm: Math.sqrt(smallest) * 1000 };
}

/** Plane through points given as flat xyz triples (relative to any nearby origin). */
export function planeFromPoints(xyz: ArrayLike<number>): PlaneFit {
  const m = emptyMoments();
  for (let i = 0; i + 2 < xyz.length; i += 3) addToMoments(m, xyz[i], xyz[i + 1], xyz[i + 2]);
  return planeFromMoments(m);
}

const dot = (a: Vec3, b: Vec3) => a[0] * b[0] + a[1] * b[1] + a[2] * b[2];

/**
 * Distance from the origin along the unit ray u to the plane through the point c (relative to
 * the ray's origin) with normal n: R = n·c / (n·u); the incidence angle acos(|n·u|) in degrees.
 * Null when the plane is edge-on to the ray (|n·u| below 1e-6).
 */
export function rangeAlongRay(normal: Vec3, pointOnPlane: Vec3, u: Vec3): { rangeM: number; incidenceDeg: number } | null {
  const nu = dot(normal, u);
  if (!(Math.abs(nu) > 1e-6)) return null;
  const r = dot(normal, pointOnPlane) / nu;
  // acos(|n·u|) written as atan2(|n×u|, |n·u|): the same angle, without acos's loss of digits near 0°
  const cx = normal[1] * u[2] - normal[2] * u[1];
  const cy = normal[2] * u[0] - normal[0] * u[2];
  const cz = normal[0] * u[1] - normal[1] * u[0];
  return { rangeM: r, incidenceDeg: (Math.atan2(Math.hypot(cx, cy, cz), Math.abs(nu)) * 180) / Math.PI };
}

export type ScanTarget = {
  id: string;
  /** Surveyed board centre relative to the station origin O (m), or null when not surveyed on the grid. */
  t: Vec3 | null;
};

export type ScanTargetResult = {
  targetId: string;
  status: "found" | "not_found";
  /** Why a target was not found (null when found). */
  reason: string | null;
  points: number;
  planeRmsMm: number | null;
  incidenceDeg: number | null;
  rangeM: number | null;
  /** D = |T − O| (m), null when T is unknown. */
  distanceM: number | null;
  /** A sample of the points for the plot: in-plane coordinates a, b (m) and distance from the plane (mm). */
  plot: { a: number[]; b: number[]; dMm: number[] } | null;
};

type Acc = { id: string; t: Vec3; r2: number; m: Moments; sample: number[]; seen: number };

/**
 * One pass over the scan: `add` takes blocks of points relative to O and keeps, per target, the
 * moments of the points within the search radius and a uniform sample (reservoir, a fixed
 * seed) for the plot. Nothing else of the scan is kept.
 */
export class ScanExtractor {
  readonly radiusM: number;
  readonly minPoints: number;
  #targets: ScanTarget[];
  #acc: Acc[];
  // the targets' boxes, flat, for a quick per-point rejection
  #lo: Float64Array;
  #hi: Float64Array;
  // a coarse grid over E, N: each cell lists the targets whose box reaches into it, so a point
  // is tested against the few targets near it, not against every target of the site
  #g = { x0: 0, y0: 0, x1: -1, y1: -1, cell: 1, nx: 0, start: new Int32Array(1), items: new Int32Array(0) };
  #seed = 0x9e3779b9;
  total = 0;

  constructor(targets: ScanTarget[], radiusM = DEFAULT_SEARCH_RADIUS_M, minPoints = DEFAULT_MIN_POINTS) {
    if (!(radiusM > 0) || !Number.isFinite(radiusM)) throw new RangeError("the search radius must be greater than 0 m");
    if (!Number.isInteger(minPoints) || minPoints < 3) throw new RangeError("the least number of points must be a whole number ≥ 3");
    this.radiusM = radiusM;
    this.minPoints = minPoints;
    this.#targets = targets;
    this.#acc = targets.filter((t) => t.t).map((t) => ({ id: t.id, t: t.t!, r2: radiusM * radiusM, m: emptyMoments(), sample: [], seen: 0 }));
    const k = this.#acc.length;
    this.#lo = new Float64Array(3 * k);
    this.#hi = new Float64Array(3 * k);
    this.#acc.forEach((a, i) => {
      for (let j = 0; j < 3; j++) {
        this.#lo[3 * i + j] = a.t[j] - radiusM;
        this.#hi[3 * i + j] = a.t[j] + radiusM;
      }
    });
    if (k) this.#buildGrid();
  }

  #buildGrid() {
    const k = this.#acc.length;
    let x0 = Infinity,
      y0 = Infinity,
      x1 = -Infinity,
      y1 = -Infinity;
    for (let i = 0; i < k; i++) {
      x0 = Math.min(x0, this.#lo[3 * i]);
      y0 = Math.min(y0, this.#lo[3 * i + 1]);
      x1 = Math.max(x1, this.#hi[3 * i]);
      y1 = Math.max(y1, this.#hi[3 * i + 1]);
    }
    // cells twice the search radius, coarser when the site is large (at most 1024 × 1024 cells)
    const cell = Math.max(2 * this.radiusM, (x1 - x0) / 1024, (y1 - y0) / 1024);
    const nx = Math.floor((x1 - x0) / cell) + 1;
    const ny = Math.floor((y1 - y0) / cell) + 1;
    const counts = new Int32Array(nx * ny + 1);
    const each = (i: number, f: (c: number) => void) => {
      const ix0 = Math.floor((this.#lo[3 * i] - x0) / cell);
      const ix1 = Math.floor((this.#hi[3 * i] - x0) / cell);
      const iy0 = Math.floor((this.#lo[3 * i + 1] - y0) / cell);
      const iy1 = Math.floor((this.#hi[3 * i + 1] - y0) / cell);
      for (let iy = iy0; iy <= iy1; iy++) for (let ix = ix0; ix <= ix1; ix++) f(iy * nx + ix);
    };
    for (let i = 0; i < k; i++) each(i, (c) => counts[c + 1]++);
    for (let c = 0; c < nx * ny; c++) counts[c + 1] += counts[c];
    const items = new Int32Array(counts[nx * ny]);
    const fill = counts.slice(0, nx * ny);
    for (let i = 0; i < k; i++) each(i, (c) => (items[fill[c]++] = i));
    this.#g = { x0, y0, x1, y1, cell, nx, start: counts, items };
  }

  #random(): number {
    // xorshift32: a fixed seed so the same file gives the same plot
    let x = this.#seed;
    x ^= x << 13;
    x ^= x >>> 17;
    x ^= x << 5;
    this.#seed = x >>> 0;
    return this.#seed / 4294967296;
  }

  /**
   * The search boxes (E, N, H relative to O, 3 numbers per target, lo and hi): a point outside
   * every box never counts, so a reader may leave it out (and say so through `seen`).
   */
  boxes(): { lo: Float64Array; hi: Float64Array } {
    return { lo: this.#lo.slice(), hi: this.#hi.slice() };
  }

  /**
   * Points as flat xyz triples relative to O; `count` points from the start of `xyz`; `seen`
   * the points of the cloud they stand for (more when a reader left out points outside boxes()).
   */
  add(xyz: Float64Array, count = Math.floor(xyz.length / 3), seen = count): void {
    const lo = this.#lo;
    const hi = this.#hi;
    const { x0, y0, x1, y1, cell, nx, start, items } = this.#g;
    this.total += seen;
    for (let p = 0; p < count; p++) {
      const x = xyz[3 * p];
      const y = xyz[3 * p + 1];
      if (x < x0 || x > x1 || y < y0 || y > y1) continue;
      const c = Math.floor((y - y0) / cell) * nx + Math.floor((x - x0) / cell);
      const z = xyz[3 * p + 2];
      for (let j = start[c], end = start[c + 1]; j < end; j++) {
        const i = items[j];
        const o = 3 * i;
        if (x < lo[o] || x > hi[o] || y < lo[o + 1] || y > hi[o + 1] || z < lo[o + 2] || z > hi[o + 2]) continue;
        const a = this.#acc[i];
        const dx = x - a.t[0];
        const dy = y - a.t[1];
        const dz = z - a.t[2];
        if (dx * dx + dy * dy + dz * dz > a.r2) continue;
        addToMoments(a.m, dx, dy, dz);
        this.#keep(a, dx, dy, dz);
      }
    }
  }

  #keep(a: Acc, dx: number, dy: number, dz: number) {
    a.seen++;
    if (a.sample.length < 3 * PLOT_SAMPLE) {
      a.sample.push(dx, dy, dz);
      return;
    }
    const j = Math.floor(this.#random() * a.seen);
    if (j < PLOT_SAMPLE) {
      a.sample[3 * j] = dx;
      a.sample[3 * j + 1] = dy;
      a.sample[3 * j + 2] = dz;
    }
  }

  results(): ScanTargetResult[] {
    const byId = new Map(this.#acc.map((a) => [a.id, a]));
    return this.#targets.map((t) => {
      const a = byId.get(t.id);
      if (!a) return notFound(t.id, 0, null, "the target has no grid coordinates (E, N, H) in the registry, so it cannot be found in a scan");
      const d = Math.hypot(a.t[0], a.t[1], a.t[2]);
      if (a.m.n < this.minPoints) {
        return notFound(t.id, a.m.n, d, `${a.m.n} point${a.m.n === 1 ? "" : "s"} within ${this.radiusM} m of the target centre; at least ${this.minPoints} are needed`);
      }
      if (!(d > 0)) return notFound(t.id, a.m.n, d, "the target centre coincides with the station origin");
      const fit = planeFromMoments(a.m);
      const u: Vec3 = [a.t[0] / d, a.t[1] / d, a.t[2] / d];
      // centroid relative to O = T + (centroid relative to T)
      const c: Vec3 = [a.t[0] + fit.centroid[0], a.t[1] + fit.centroid[1], a.t[2] + fit.centroid[2]];
      const along = rangeAlongRay(fit.normal, c, u);
      if (!along || !(along.rangeM > 0)) {
        return notFound(t.id, a.m.n, d, "the fitted plane is edge-on to the line of sight (or behind the station); no range along the ray");
      }
      return {
        targetId: t.id,
        status: "found",
        reason: null,
        points: a.m.n,
        planeRmsMm: fit.planeRmsMm,
        incidenceDeg: along.incidenceDeg,
        rangeM: along.rangeM,
        distanceM: d,
        plot: plotOf(a.sample, fit),
      };
    });
  }
}

function notFound(targetId: string, points: number, distanceM: number | null, reason: string): ScanTargetResult {
  return { targetId, status: "not_found", reason, points, planeRmsMm: null, incidenceDeg: null, rangeM: null, distanceM, plot: null };
}

/** In-plane coordinates and signed distances (mm) of sample points (relative to the fit's origin). */
export function plotOf(xyz: ArrayLike<number>, fit: PlaneFit): { a: number[]; b: number[]; dMm: number[] } {
  const a: number[] = [];
  const b: number[] = [];
  const dMm: number[] = [];
  const [c, n, [e1, e2]] = [fit.centroid, fit.normal, fit.axes];
  for (let i = 0; i + 2 < xyz.length; i += 3) {
    const p: Vec3 = [xyz[i] - c[0], xyz[i + 1] - c[1], xyz[i + 2] - c[2]];
    a.push(round6(dot(p, e1)));
    b.push(round6(dot(p, e2)));
    dMm.push(round6(dot(p, n) * 1000));
  }
  return { a, b, dMm };
}

const round6 = (x: number) => Math.round(x * 1e6) / 1e6;
