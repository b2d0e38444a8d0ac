import { expect, test } from "vitest";
import { planeDepth, rng, type Camera } from "../../tests/support/scan-fixtures";
import { checkBox, depthFrameFromRaw, depthFromCorrelation, frameTarget, type DepthFrame } from "./depth.ts";
import { C0 } from "./range.ts";

// Analytic fixtures (ranging.md §8): a plane through the point at range R on the ray of the box
// centre, turned by a known tilt; every pixel's depth is intersected exactly, so the recovered
// range must be R and the incidence the tilt.

const cam: Camera = { width: 160, height: 120, fx: 120, fy: 121, cx: 79.5, cy: 60.2 };
const K = { fx: cam.fx, fy: cam.fy, cx: cam.cx, cy: cam.cy };
const box = { u0: 100, v0: 30, u1: 130, v1: 55 };
const frame = (z: Float64Array): DepthFrame => ({ width: cam.width, height: cam.height, zM: z });

test("one exact frame: radial range along the box-centre ray and incidence", () => {
  for (const [R, tilt] of [
    [2.5, 0],
    [4.2, 25],
    [1.1, 50],
  ]) {
    const r = frameTarget([frame(planeDepth(cam, box, R, tilt))], box, K);
    expect(r.status).toBe("found");
    expect(r.points).toBe(31 * 26);
    expect(r.rangeM!).toBeCloseTo(R, 9);
    expect(r.incidenceDeg!).toBeCloseTo(tilt, 6);
    expect(r.temporalNoiseMm).toBeNull();
    expect(r.flyingPixels).toBe(0);
  }
});

test("several noisy frames: mean-depth fit to 0.2 mm, temporal noise ≈ the noise, flying pixels counted", () => {
  const z = planeDepth(cam, box, 3.0, 15);
  const random = rng(5);
  const frames = Array.from({ length: 8 }, () => {
    const f = Float64Array.from(z, (d) => d + random.normal() * 0.002);
    return frame(f);
  });
  // three flying pixels (mixed returns between the board and the wall behind it)
  for (const [u, v] of [
    [101, 31],
    [129, 54],
    [115, 40],
  ]) {
    for (const f of frames) f.zM[v * cam.width + u] += 0.4;
  }
  // one pixel missing in a single frame is dropped from the box
  frames[3].zM[45 * cam.width + 120] = NaN;
  const r = frameTarget(frames, box, K);
  expect(r.points).toBe(31 * 26 - 1);
  expect(r.flyingPixels).toBe(3);
  // SD over 8 frames of 2 mm noise, its median over the box (n − 1 in each SD)
  expect(r.temporalNoiseMm!).toBeGreaterThan(1.7);
  expect(r.temporalNoiseMm!).toBeLessThan(2.3);
  // the three flying pixels pull the plane by their share; without them the fit is at 0.2 mm
  const clean = frameTarget(
    frames.map((f) => {
      const c = Float64Array.from(f.zM);
      for (const [u, v] of [
        [101, 31],
        [129, 54],
        [115, 40],
      ])
        c[v * cam.width + u] = NaN;
      return frame(c);
    }),
    box,
    K,
  );
  expect(Math.abs(clean.rangeM! - 3.0) * 1000).toBeLessThan(0.2);
  expect(Math.abs(clean.incidenceDeg! - 15)).toBeLessThan(0.5);
});

test("zero pixels are missing; too small a box is not found", () => {
  const raw = new Uint16Array(cam.width * cam.height).fill(0);
  const f = depthFrameFromRaw(raw, cam.width, cam.height, 1);
  const r = frameTarget([f], box, K);
  expect(r).toMatchObject({ status: "not_found", points: 0, rangeM: null });
  expect(r.reason).toMatch(/0 valid pixels/);
  expect(() => checkBox({ u0: 150, v0: 0, u1: 170, v1: 10 }, cam.width, cam.height)).toThrow(/outside/);
});

test("correlation frames through the single-shot phase function give the depth frame", () => {
  const f = 20e6;
  const z = planeDepth(cam, box, 3.3, 10);
  const N = 4;
  const frames = Array.from({ length: N }, (_, k) =>
    Float64Array.from(z, (d, i) => {
      const u = i % cam.width;
      const v = Math.floor(i / cam.width);
      const r = d * Math.hypot((u - K.cx) / K.fx, (v - K.cy) / K.fy, 1);
      return 1000 + 500 * Math.cos((4 * Math.PI * f * r) / C0 - (2 * Math.PI * k) / N);
    }),
  );
  const depth = depthFromCorrelation(frames, cam.width, cam.height, f, K);
  const i = 40 * cam.width + 110;
  expect(depth.zM[i]).toBeCloseTo(z[i], 9);
  expect(depth.amplitude[i]).toBeCloseTo(500, 6);
  const r = frameTarget([depth], box, K);
  expect(r.rangeM!).toBeCloseTo(3.3, 8);
  // amplitude floor: every pixel here has A = 500
  const none = depthFromCorrelation(frames, cam.width, cam.height, f, K, { minAmplitude: 600 });
  expect(Number.isNaN(none.zM[i])).toBe(true);
});
