import { expect, test } from "vitest";
import { boardPoints, boardTruth, clutter, rng, type Board, type V3 } from "../../tests/support/scan-fixtures";
import { planeFromPoints, rangeAlongRay, ScanExtractor } from "./scan.ts";

// Analytic fixtures (ranging.md §8): each board is a plane through the point at D + offset on
// the line of sight, its normal turned by the tilt, so the range along the ray is D + offset and
// the incidence the tilt — computed from the geometry, not from the code under test.

const O: V3 = [0, 0, 0];
const board = (centre: V3, offsetMm: number, tiltDeg: number, noiseMm = 0, perSide = 40): Board => ({ centre, offsetMm, tiltDeg, halfM: 0.2, perSide, noiseMm });

function run(boards: Board[], extra: V3[] = [], radius = 0.3, minPoints = 50) {
  const pts = [...boards.flatMap((b, i) => boardPoints(O, b, rng(100 + i))), ...extra];
  const ex = new ScanExtractor(
    boards.map((b, i) => ({ id: `t${i}`, t: b.centre })),
    radius,
    minPoints,
  );
  const xyz = new Float64Array(pts.flatMap((p) => p));
  // in two blocks, as the reader hands them over
  const half = Math.floor(pts.length / 2);
  ex.add(xyz.subarray(0, 3 * half), half);
  ex.add(xyz.subarray(3 * half), pts.length - half);
  return ex.results();
}

test("noiseless boards at known distances, tilts and offsets: range and incidence to 1e-6", () => {
  const boards = [board([10, 0, 0], 0, 0), board([20, 15, 1.2], 4.5, 30), board([-35, 42, -0.8], -7.25, 55), board([3, -4, 0.5], 12, 10)];
  const res = run(boards);
  boards.forEach((b, i) => {
    const t = boardTruth(O, b);
    expect(res[i].status).toBe("found");
    expect(res[i].points).toBe(1600);
    expect(res[i].rangeM!).toBeCloseTo(t.rangeM, 9);
    expect(res[i].distanceM!).toBeCloseTo(t.distanceM, 12);
    expect(res[i].incidenceDeg!).toBeCloseTo(t.incidenceDeg, 6);
    expect(res[i].planeRmsMm!).toBeLessThan(1e-4); // rounding only (nanometres)
  });
});

test("noise and clutter: range to 0.2 mm, plane RMS ≈ the noise, clutter ignored", () => {
  const boards = [board([25, 5, 0.3], 3, 20, 2), board([60, -10, 2], -5, 40, 1.5)];
  const res = run(
    boards,
    clutter(
      O,
      boards.map((b) => b.centre),
      20000,
    ),
  );
  boards.forEach((b, i) => {
    const t = boardTruth(O, b);
    expect(res[i].points).toBe(1600);
    expect(Math.abs(res[i].rangeM! - t.rangeM) * 1000).toBeLessThan(0.2);
    expect(Math.abs(res[i].incidenceDeg! - t.incidenceDeg)).toBeLessThan(0.5);
    expect(res[i].planeRmsMm!).toBeGreaterThan(b.noiseMm * 0.9);
    expect(res[i].planeRmsMm!).toBeLessThan(b.noiseMm * 1.1);
    expect(res[i].plot!.dMm.length).toBe(1500);
  });
});

test("too few points, no coordinates, edge-on: not found with the reason", () => {
  const sparse = board([12, 3, 0], 0, 0, 0, 6); // 36 points
  const ex = new ScanExtractor(
    [
      { id: "sparse", t: sparse.centre },
      { id: "nogrid", t: null },
    ],
    0.3,
    50,
  );
  ex.add(new Float64Array(boardPoints(O, sparse).flatMap((p) => p)));
  const [a, b] = ex.results();
  expect(a).toMatchObject({ status: "not_found", points: 36, rangeM: null });
  expect(a.reason).toMatch(/36 points within 0.3 m.*at least 50/);
  expect(b).toMatchObject({ status: "not_found", points: 0 });
  expect(b.reason).toMatch(/no grid coordinates/);
  expect(rangeAlongRay([0, 0, 1], [1, 0, 0], [1, 0, 0])).toBeNull();
});

test("plane fit of points far from the origin keeps its digits when taken relative to a nearby point", () => {
  // a plane z = 0.001·x through grid-sized coordinates, fitted relative to a point nearby
  const pts: number[] = [];
  for (let i = 0; i < 30; i++) for (let j = 0; j < 30; j++) pts.push(i * 0.01, j * 0.01, 0.001 * i * 0.01);
  const fit = planeFromPoints(pts);
  expect(fit.planeRmsMm).toBeLessThan(1e-9);
  expect(Math.abs(fit.normal[2])).toBeCloseTo(1 / Math.hypot(1, 0.001), 12);
});

test("targets kilometres apart and targets side by side are all found (the coarse grid misses none)", () => {
  const boards = [board([3000, -2500, 10], 2, 15), board([-4000, 3500, -5], -3, 5), board([12, 0.5, 0], 1, 0), board([12, -0.5, 0], -1, 0), board([5, 5, 5], 0, 45)];
  const res = run(boards);
  boards.forEach((b, i) => {
    expect(res[i].status).toBe("found");
    expect(res[i].points).toBe(1600);
    expect(res[i].rangeM!).toBeCloseTo(boardTruth(O, b).rangeM, 9);
  });
});
