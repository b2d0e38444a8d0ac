// A depth frame as the frames page draws it (issue 18): metres per pixel, the false-colour ramp,
// the depth range the colours span, the box dragged on the target as text. Issue 13: split out of
// review.frames.tsx.

export type Frame = { width: number; height: number; zM: Float64Array };
export type Box = { u0: number; v0: number; u1: number; v1: number };

// A perceptual ramp (dark violet → teal → yellow), near to depth dark, far bright.
export const RAMP = [
  [68, 1, 84],
  [59, 82, 139],
  [33, 145, 140],
  [94, 201, 98],
  [253, 231, 37],
];
export function ramp(t: number): [number, number, number] {
  const x = Math.max(0, Math.min(1, t)) * (RAMP.length - 1);
  const i = Math.min(RAMP.length - 2, Math.floor(x));
  const f = x - i;
  return [0, 1, 2].map((k) => Math.round(RAMP[i][k] + (RAMP[i + 1][k] - RAMP[i][k]) * f)) as [number, number, number];
}

export function depthRange(z: Float64Array): [number, number] {
  const v = Array.from(z)
    .filter((x) => x > 0)
    .sort((a, b) => a - b);
  if (!v.length) return [0, 1];
  const lo = v[Math.floor(v.length * 0.02)];
  const hi = v[Math.min(v.length - 1, Math.floor(v.length * 0.98))];
  return hi > lo ? [lo, hi] : [lo, lo + 0.001];
}

export const boxText = (b: Box) => `${b.u0},${b.v0},${b.u1},${b.v1}`;
export function parseBox(s: string): Box | null {
  const m = /^\s*(\d+)\s*,\s*(\d+)\s*,\s*(\d+)\s*,\s*(\d+)\s*$/.exec(s);
  if (!m) return null;
  const [u0, v0, u1, v1] = m.slice(1).map(Number);
  return u0 <= u1 && v0 <= v1 ? { u0, v0, u1, v1 } : null;
}
