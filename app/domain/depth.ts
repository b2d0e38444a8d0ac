// Check-shots from time-of-flight depth frames (ranging.md §8). A depth value is the depth along
// the optical axis (Z); pixel (u, v) back-projects through the pinhole intrinsics to
// X = z·((u − cx)/fx, (v − cy)/fy, 1), pixel centres at integer coordinates. A target is a box
// u0..u1, v0..v1 (inclusive); its points are fitted to a plane (scan.ts) and the range is the
// distance from the camera origin along the ray through the box centre to that plane.
// Zero pixels are missing, never 0 m.
import { DomainError } from "./errors.ts";
import type { Vec3 } from "./eigen3.ts";
import { phaseFromSamples, rangeFromPhase } from "./phase.ts";
import { addToMoments, DEFAULT_MIN_POINTS, emptyMoments, planeFromMoments, plotOf, rangeAlongRay, PLOT_SAMPLE } from "./scan.ts";

export type Intrinsics = { fx: number; fy: number; cx: number; cy: number };
export type Box = { u0: number; v0: number; u1: number; v1: number };
/** Depth (Z, metres) per pixel, row-major; NaN = missing. */
export type DepthFrame = { width: number; height: number; zM: Float64Array };

export function checkIntrinsics(k: Intrinsics, path = "sensor.intrinsics"): void {
  for (const f of ["fx", "fy"] as const) {
    if (!(Number.isFinite(k[f]) && k[f] > 0)) throw new DomainError(`${path}.${f}`, "not_positive", `${f} must be greater than 0 pixels`);
  }
  for (const f of ["cx", "cy"] as const) {
    if (!Number.isFinite(k[f])) throw new DomainError(`${path}.${f}`, "not_finite", `${f} must be a number of pixels`);
  }
}

/** A 16-bit depth image (values × depthScaleMm = Z in mm) → metres, 0 → missing. */
export function depthFrameFromRaw(values: ArrayLike<number>, width: number, height: number, depthScaleMm: number): DepthFrame {
  if (!(depthScaleMm > 0)) throw new DomainError("sensor.depthScaleMm", "not_positive", "the depth scale must be greater than 0 mm per unit");
  if (values.length !== width * height) throw new DomainError("depth", "size", `the image holds ${values.length} values, not ${width}×${height}`);
  const zM = new Float64Array(width * height);
  const s = depthScaleMm / 1000;
  for (let i = 0; i < zM.length; i++) zM[i] = values[i] === 0 ? NaN : values[i] * s;
  return { width, height, zM };
}

export function checkBox(box: Box, width: number, height: number, path = "box"): void {
  const { u0, v0, u1, v1 } = box;
  if (![u0, v0, u1, v1].every(Number.isInteger)) throw new DomainError(path, "not_integer", "the box corners must be whole pixel numbers");
  if (u0 > u1 || v0 > v1) throw new DomainError(path, "empty", "the box must have u0 ≤ u1 and v0 ≤ v1");
  if (u0 < 0 || v0 < 0 || u1 >= width || v1 >= height) {
    throw new DomainError(path, "outside", `the box ${u0},${v0},${u1},${v1} reaches outside the ${width}×${height} frame`);
  }
}

/**
 * Raw correlation frames (N ≥ 3 at δₖ = 2πk/N, one modulation frequency) → a depth frame, each
 * pixel through the same phase function as a single shot (ranging.md §1). The phase gives the
 * range along the pixel's ray; Z = R / |((u − cx)/fx, (v − cy)/fy, 1)|. Pixels whose amplitude is
 * below minAmplitude, or that carry no modulation, are missing. `n` is the refractive index the
 * ranges are expressed in (the sensor's own convention, so the reported-range rules then apply).
 */
export function depthFromCorrelation(
  frames: ArrayLike<number>[],
  width: number,
  height: number,
  frequencyHz: number,
  intrinsics: Intrinsics,
  opts: { n?: number; minAmplitude?: number } = {},
): DepthFrame & { amplitude: Float64Array } {
  const N = frames.length;
  if (N < 3) throw new DomainError("correlation", "too_few_samples", `at least 3 correlation frames are needed (got ${N})`);
  frames.forEach((f, k) => {
    if (f.length !== width * height) throw new DomainError(`correlation.${k}`, "size", `frame ${k} is not ${width}×${height} like the first`);
  });
  checkIntrinsics(intrinsics);
  const n = opts.n ?? 1;
  const minA = opts.minAmplitude ?? 0;
  const zM = new Float64Array(width * height);
  const amplitude = new Float64Array(width * height);
  const samples = new Array<number>(N);
  for (let v = 0; v < height; v++) {
    const y = (v - intrinsics.cy) / intrinsics.fy;
    for (let u = 0; u < width; u++) {
      const i = v * width + u;
      for (let k = 0; k < N; k++) samples[k] = frames[k][i];
      let est;
      try {
        est = phaseFromSamples(samples);
      } catch (e) {
        if (!(e instanceof DomainError)) throw e;
        zM[i] = NaN;
        continue;
      }
      amplitude[i] = est.amplitude;
      if (est.amplitude < minA) {
        zM[i] = NaN;
        continue;
      }
      const x = (u - intrinsics.cx) / intrinsics.fx;
      const r = rangeFromPhase(est.phaseRad, frequencyHz, n);
      zM[i] = r / Math.sqrt(x * x + y * y + 1);
    }
  }
  return { width, height, zM, amplitude };
}

export type FrameTargetResult = {
  status: "found" | "not_found";
  reason: string | null;
  points: number;
  planeRmsMm: number | null;
  incidenceDeg: number | null;
  rangeM: number | null;
  /** Median over the box of the per-pixel SD over the frames (n − 1), mm; null for one frame. */
  temporalNoiseMm: number | null;
  /** Box points more than 3·planeRms off the plane. */
  flyingPixels: number | null;
  plot: { a: number[]; b: number[]; dMm: number[] } | null;
};

/**
 * The box of one target over one or more frames of the same view: the plane is fitted to the
 * per-pixel mean depth (a pixel missing in any frame is dropped), the temporal noise is the
 * median over the box of the per-pixel SD, and flying pixels are counted.
 */
export function frameTarget(frames: DepthFrame[], box: Box, intrinsics: Intrinsics, minPoints = DEFAULT_MIN_POINTS): FrameTargetResult {
  if (!frames.length) throw new DomainError("depth", "empty", "at least one depth frame is needed");
  const { width, height } = frames[0];
  frames.forEach((f, k) => {
    if (f.width !== width || f.height !== height) throw new DomainError(`depth.${k}`, "size", `frame ${k} is ${f.width}×${f.height}, not ${width}×${height} like the first`);
  });
  checkIntrinsics(intrinsics);
  checkBox(box, width, height);
  const { fx, fy, cx, cy } = intrinsics;
  const nf = frames.length;
  const xyz: number[] = [];
  const sds: number[] = [];
  const m = emptyMoments();
  for (let v = box.v0; v <= box.v1; v++) {
    for (let u = box.u0; u <= box.u1; u++) {
      const i = v * width + u;
      let sum = 0;
      let ok = true;
      for (let k = 0; k < nf; k++) {
        const z = frames[k].zM[i];
        if (!(z > 0)) {
          ok = false;
          break;
        }
        sum += z;
      }
      if (!ok) continue;
      const z = sum / nf;
      if (nf > 1) {
        let ss = 0;
        for (let k = 0; k < nf; k++) ss += (frames[k].zM[i] - z) ** 2;
        sds.push(Math.sqrt(ss / (nf - 1)));
      }
      const x = (z * (u - cx)) / fx;
      const y = (z * (v - cy)) / fy;
      xyz.push(x, y, z);
      addToMoments(m, x, y, z);
    }
  }
  const temporalNoiseMm = nf > 1 && sds.length ? medianOf(sds) * 1000 : null;
  const notFound = (reason: string): FrameTargetResult => ({
    status: "not_found",
    reason,
    points: m.n,
    planeRmsMm: null,
    incidenceDeg: null,
    rangeM: null,
    temporalNoiseMm,
    flyingPixels: null,
    plot: null,
  });
  if (m.n < minPoints) return notFound(`${m.n} valid pixel${m.n === 1 ? "" : "s"} in the box (missing in some frame or zero); at least ${minPoints} are needed`);
  const fit = planeFromMoments(m);
  const uc = (box.u0 + box.u1) / 2;
  const vc = (box.v0 + box.v1) / 2;
  const ray: Vec3 = [(uc - cx) / fx, (vc - cy) / fy, 1];
  const len = Math.hypot(ray[0], ray[1], ray[2]);
  const along = rangeAlongRay(fit.normal, fit.centroid, [ray[0] / len, ray[1] / len, ray[2] / len]);
  if (!along || !(along.rangeM > 0)) return notFound("the fitted plane is edge-on to the ray through the box centre; no range");
  // a 1 µm floor: on a noiseless plane the RMS is rounding, and every pixel would count as flying
  const lim = Math.max(3 * fit.planeRmsMm, 0.001) / 1000;
  let flying = 0;
  const [c, nrm] = [fit.centroid, fit.normal];
  for (let j = 0; j < xyz.length; j += 3) {
    const d = (xyz[j] - c[0]) * nrm[0] + (xyz[j + 1] - c[1]) * nrm[1] + (xyz[j + 2] - c[2]) * nrm[2];
    if (Math.abs(d) > lim) flying++;
  }
  // an even thinning for the plot: every k-th pixel
  const step = Math.max(1, Math.ceil(m.n / PLOT_SAMPLE));
  const sample: number[] = [];
  for (let j = 0; j < m.n; j += step) sample.push(xyz[3 * j], xyz[3 * j + 1], xyz[3 * j + 2]);
  // plotOf takes points relative to the fit's moments origin (the camera here)
  return {
    status: "found",
    reason: null,
    points: m.n,
    planeRmsMm: fit.planeRmsMm,
    incidenceDeg: along.incidenceDeg,
    rangeM: along.rangeM,
    temporalNoiseMm,
    flyingPixels: flying,
    plot: plotOf(sample, fit),
  };
}

function medianOf(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  const h = s.length >> 1;
  return s.length % 2 ? s[h] : (s[h - 1] + s[h]) / 2;
}
