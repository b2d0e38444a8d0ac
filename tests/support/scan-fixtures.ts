// Synthetic point clouds and depth frames from known geometry (ranging.md §8), written as real
// ASPRS LAS files and 16-bit PNGs, so tests compare what Shotbook recovers with analytic values.
// A board is a square plane through the point at range D + offset on the line of sight from
// the origin to its surveyed centre, its normal turned from the line of sight by `tiltDeg`:
// the analytic range along the ray is then exactly D + offset and the incidence exactly the tilt.
import { encode } from "fast-png";

export type V3 = [number, number, number];

/** Deterministic normal deviates (xorshift32 + Box–Muller). */
export function rng(seed = 12345) {
  let s = seed >>> 0 || 1;
  const uniform = () => {
    s ^= s << 13;
    s ^= s >>> 17;
    s ^= s << 5;
    s >>>= 0;
    return (s + 0.5) / 4294967296;
  };
  const normal = () => Math.sqrt(-2 * Math.log(uniform())) * Math.cos(2 * Math.PI * uniform());
  return { uniform, normal };
}

const sub = (a: V3, b: V3): V3 => [a[0] - b[0], a[1] - b[1], a[2] - b[2]];
const add = (a: V3, b: V3): V3 => [a[0] + b[0], a[1] + b[1], a[2] + b[2]];
const mul = (a: V3, k: number): V3 => [a[0] * k, a[1] * k, a[2] * k];
const cross = (a: V3, b: V3): V3 => [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]];
const norm = (a: V3) => Math.hypot(a[0], a[1], a[2]);
const unit = (a: V3): V3 => mul(a, 1 / norm(a));

export type Board = {
  /** Surveyed centre T. */
  centre: V3;
  /** Range offset injected along the line of sight (mm): the sensor "reads long" by this much. */
  offsetMm: number;
  tiltDeg: number;
  /** Half the side of the square board (m). */
  halfM: number;
  /** Points along each side. */
  perSide: number;
  /** Noise along the board normal (mm, 1 σ). */
  noiseMm: number;
};

/** The analytic figures of a board seen from O. */
export function boardTruth(O: V3, b: Board) {
  const D = norm(sub(b.centre, O));
  return { distanceM: D, rangeM: D + b.offsetMm / 1000, errorMm: b.offsetMm, incidenceDeg: b.tiltDeg };
}

/** Points on the board (absolute coordinates), seen from O. */
export function boardPoints(O: V3, b: Board, random = rng()): V3[] {
  const u = unit(sub(b.centre, O));
  const D = norm(sub(b.centre, O));
  const P = add(O, mul(u, D + b.offsetMm / 1000));
  // e1 horizontal across the line of sight, e2 completes the frame
  const up: V3 = Math.abs(u[2]) > 0.9 ? [1, 0, 0] : [0, 0, 1];
  const e1 = unit(cross(u, up));
  const e2 = cross(e1, u);
  const t = (b.tiltDeg * Math.PI) / 180;
  // normal turned by the tilt about e1 (towards e2); the in-plane axes turn with it
  const n: V3 = add(mul(u, -Math.cos(t)), mul(e2, Math.sin(t)));
  const a2 = unit(cross(n, e1));
  const out: V3[] = [];
  for (let i = 0; i < b.perSide; i++) {
    for (let j = 0; j < b.perSide; j++) {
      const s = -b.halfM + (2 * b.halfM * (i + 0.5)) / b.perSide;
      const r = -b.halfM + (2 * b.halfM * (j + 0.5)) / b.perSide;
      const noise = (random.normal() * b.noiseMm) / 1000;
      out.push(add(add(add(P, mul(e1, s)), mul(a2, r)), mul(n, noise)));
    }
  }
  return out;
}

/** Clutter: a ground plane and scattered points, none within `keepAwayM` of any board centre. */
export function clutter(O: V3, centres: V3[], count: number, random = rng(99), keepAwayM = 0.6): V3[] {
  const out: V3[] = [];
  while (out.length < count) {
    const ground = out.length % 2 === 0;
    const p: V3 = [O[0] + (random.uniform() - 0.5) * 120, O[1] + (random.uniform() - 0.5) * 120, ground ? O[2] - 1.6 + random.normal() * 0.01 : O[2] + (random.uniform() - 0.3) * 10];
    if (centres.every((c) => norm(sub(p, c)) > keepAwayM)) out.push(p);
  }
  return out;
}

export type LasOptions = {
  version?: 2 | 3 | 4;
  pointFormat?: number;
  scale?: V3;
  offset?: V3;
  /** Extra bytes per record beyond the format's least length. */
  extraBytes?: number;
  /** One variable-length record of this many payload bytes between header and points. */
  vlrBytes?: number;
};

const RECORD = [20, 28, 26, 34, 57, 63, 30, 36, 38, 59, 67];

/** The public header of a LAS file (LAS Specification 1.4 R15, ASPRS 2019). */
export function lasHeader(count: number, bounds: { min: V3; max: V3 }, o: LasOptions = {}): { header: Uint8Array; recordLength: number; pointsOffset: number } {
  const version = o.version ?? 2;
  const fmt = o.pointFormat ?? (version === 4 ? 6 : 1);
  const scale = o.scale ?? [0.0001, 0.0001, 0.0001];
  const offset = o.offset ?? [0, 0, 0];
  const headerSize = version === 2 ? 227 : version === 3 ? 235 : 375;
  const vlr = o.vlrBytes ? 54 + o.vlrBytes : 0;
  const recordLength = RECORD[fmt] + (o.extraBytes ?? 0);
  const pointsOffset = headerSize + vlr;
  const buf = new Uint8Array(pointsOffset);
  const dv = new DataView(buf.buffer);
  buf.set([76, 65, 83, 70], 0); // "LASF"
  buf[24] = 1;
  buf[25] = version;
  const text = (at: number, s: string) => [...s].forEach((ch, i) => (buf[at + i] = ch.charCodeAt(0)));
  text(26, "Shotbook test fixture");
  text(58, "scan-fixtures.ts");
  dv.setUint16(90, 1, true);
  dv.setUint16(92, 2026, true);
  dv.setUint16(94, headerSize, true);
  dv.setUint32(96, pointsOffset, true);
  dv.setUint32(100, vlr ? 1 : 0, true);
  buf[104] = fmt;
  dv.setUint16(105, recordLength, true);
  dv.setUint32(107, fmt >= 6 ? 0 : count, true);
  dv.setUint32(111, fmt >= 6 ? 0 : count, true);
  [0, 1, 2].forEach((i) => dv.setFloat64(131 + 8 * i, scale[i], true));
  [0, 1, 2].forEach((i) => dv.setFloat64(155 + 8 * i, offset[i], true));
  [0, 1, 2].forEach((i) => {
    dv.setFloat64(179 + 16 * i, bounds.max[i], true);
    dv.setFloat64(187 + 16 * i, bounds.min[i], true);
  });
  if (version === 4) {
    dv.setBigUint64(247, BigInt(count), true);
    dv.setBigUint64(255, BigInt(count), true);
  }
  if (vlr) {
    text(headerSize + 2, "ShotbookTest");
    dv.setUint16(headerSize + 18, 1, true);
    dv.setUint16(headerSize + 20, o.vlrBytes!, true);
  }
  return { header: buf, recordLength, pointsOffset };
}

/** Point records of absolute coordinates (scaled integers, the rest of each record zero). */
export function lasRecords(points: V3[] | Float64Array, recordLength: number, o: LasOptions = {}): Uint8Array {
  const scale = o.scale ?? [0.0001, 0.0001, 0.0001];
  const offset = o.offset ?? [0, 0, 0];
  const n = Array.isArray(points) ? points.length : points.length / 3;
  const buf = new Uint8Array(n * recordLength);
  const dv = new DataView(buf.buffer);
  for (let i = 0; i < n; i++) {
    const p = Array.isArray(points) ? points[i] : [points[3 * i], points[3 * i + 1], points[3 * i + 2]];
    for (let k = 0; k < 3; k++) dv.setInt32(i * recordLength + 4 * k, Math.round((p[k] - offset[k]) / scale[k]), true);
    dv.setUint16(i * recordLength + 12, 1000, true); // intensity
  }
  return buf;
}

/** A whole LAS file of these points. */
export function lasFile(points: V3[], o: LasOptions = {}): Uint8Array {
  const min: V3 = [Infinity, Infinity, Infinity];
  const max: V3 = [-Infinity, -Infinity, -Infinity];
  for (const p of points)
    for (let k = 0; k < 3; k++) {
      min[k] = Math.min(min[k], p[k]);
      max[k] = Math.max(max[k], p[k]);
    }
  const { header, recordLength } = lasHeader(points.length, { min, max }, o);
  const recs = lasRecords(points, recordLength, o);
  const out = new Uint8Array(header.length + recs.length);
  out.set(header, 0);
  out.set(recs, header.length);
  return out;
}

// ---------------------------------------------------------------------------------------------
// Depth frames

export type Camera = { width: number; height: number; fx: number; fy: number; cx: number; cy: number };

/**
 * Z-depth (m) of each pixel seeing a plane through the point at range R along the ray of pixel
 * (uc, vc), whose normal is the reversed ray turned by tiltDeg about the camera's x axis; other
 * pixels see a wall at `backgroundM`.
 */
export function planeDepth(cam: Camera, box: { u0: number; v0: number; u1: number; v1: number }, rangeM: number, tiltDeg: number, backgroundM = 0): Float64Array {
  const uc = (box.u0 + box.u1) / 2;
  const vc = (box.v0 + box.v1) / 2;
  const ray = unit([(uc - cam.cx) / cam.fx, (vc - cam.cy) / cam.fy, 1]);
  const P = mul(ray, rangeM);
  const side = unit(cross(ray, [0, 1, 0]));
  const upish = cross(side, ray);
  const t = (tiltDeg * Math.PI) / 180;
  const n: V3 = add(mul(ray, -Math.cos(t)), mul(upish, Math.sin(t)));
  const z = new Float64Array(cam.width * cam.height);
  const nP = n[0] * P[0] + n[1] * P[1] + n[2] * P[2];
  for (let v = 0; v < cam.height; v++) {
    for (let u = 0; u < cam.width; u++) {
      const d: V3 = [(u - cam.cx) / cam.fx, (v - cam.cy) / cam.fy, 1];
      const inBox = u >= box.u0 - 8 && u <= box.u1 + 8 && v >= box.v0 - 8 && v <= box.v1 + 8;
      // the board covers its box and a margin; beyond it, the background wall (or nothing)
      z[v * cam.width + u] = inBox ? nP / (n[0] * d[0] + n[1] * d[1] + n[2] * d[2]) : backgroundM;
    }
  }
  return z;
}

/** A 16-bit grey PNG of depth values (m) at `depthScaleMm` per unit, plus noise (mm). */
export function depthPng(cam: Camera, zM: Float64Array, depthScaleMm: number, noiseMm = 0, random = rng(7)): Uint8Array {
  const data = new Uint16Array(cam.width * cam.height);
  for (let i = 0; i < data.length; i++) {
    if (!(zM[i] > 0)) continue;
    const mm = zM[i] * 1000 + (noiseMm ? random.normal() * noiseMm : 0);
    data[i] = Math.max(1, Math.min(65535, Math.round(mm / depthScaleMm)));
  }
  return encode({ width: cam.width, height: cam.height, data, depth: 16, channels: 1 });
}

/**
 * N correlation frames Iₖ = B + A·cos(φ − 2πk/N) per pixel, φ = 4π·f·r/c₀ (vacuum) with r the
 * radial range of each pixel to the scene of zM, as 16-bit PNGs.
 */
export function correlationPngs(cam: Camera, zM: Float64Array, frequencyHz: number, N = 4, A = 4000, B = 20000): Uint8Array[] {
  const C0 = 299_792_458;
  const frames = Array.from({ length: N }, () => new Uint16Array(cam.width * cam.height));
  for (let v = 0; v < cam.height; v++) {
    for (let u = 0; u < cam.width; u++) {
      const i = v * cam.width + u;
      if (!(zM[i] > 0)) {
        for (let k = 0; k < N; k++) frames[k][i] = B; // no modulation: missing
        continue;
      }
      const x = (u - cam.cx) / cam.fx;
      const y = (v - cam.cy) / cam.fy;
      const r = zM[i] * Math.sqrt(x * x + y * y + 1);
      const phi = (4 * Math.PI * frequencyHz * r) / C0;
      for (let k = 0; k < N; k++) frames[k][i] = Math.round(B + A * Math.cos(phi - (2 * Math.PI * k) / N));
    }
  }
  return frames.map((data) => encode({ width: cam.width, height: cam.height, data, depth: 16, channels: 1 }));
}
