import { mkdirSync, writeFileSync } from "node:fs";
import { resolve } from "node:path";
import { afterAll, expect, test } from "vitest";
import { ScanExtractor } from "~/domain";
import { integerBoxes } from "~/scan/laz-chunks";
import { closeScanPool, lazTaskRuns, readPointCloud, scanPoolCompleted, scanPoolDecoders } from "~/scan/point-cloud.server";
import { lazFile } from "../support/laz-writer";
import { boardPoints, boardTruth, clutter, rng, type Board, type V3 } from "../support/scan-fixtures";

// Issue 18: a LAZ file's chunks decoded on worker threads, keeping only the points in the
// targets' boxes, must give exactly what one thread reading every point gives: the same
// targets, ranges, planes and plotted samples (the samples depend on the order of the points).
// The truth beside it is analytic (boardTruth: the distance from the station to the surveyed
// centre plus the injected offset), as in tests/integration/scans.test.ts.

const dir = resolve(process.env.DATA_DIR!, "laz-pool");
mkdirSync(dir, { recursive: true });
afterAll(() => closeScanPool());

const O: V3 = [512_345.6789, 6_350_123.4567, 102.7];
const boards: Board[] = Array.from({ length: 7 }, (_, i) => {
  const a = (i / 7) * 2 * Math.PI;
  const d = 6 + i * 9;
  return { centre: [O[0] + d * Math.cos(a), O[1] + d * Math.sin(a), O[2] + (i % 3) - 1], offsetMm: 2 * i - 5, tiltDeg: (i * 7) % 50, halfM: 0.2, perSide: 30, noiseMm: 1 };
});

function extractor() {
  // one target with no grid position, as a site may have
  return new ScanExtractor([...boards.map((b, i) => ({ id: `b${i}`, t: [b.centre[0] - O[0], b.centre[1] - O[1], b.centre[2] - O[2]] as V3 })), { id: "no-grid", t: null }]);
}

test("a multi-chunk LAZ: worker threads with the nearness filter give the same targets as one thread reading every point", async () => {
  // boards spread through the file (not all in its first chunk), among clutter
  const pts: V3[] = [];
  const cl = clutter(
    O,
    boards.map((b) => b.centre),
    60_000,
    rng(5),
  );
  boards.forEach((b, i) => {
    pts.push(...cl.slice(i * 8000, (i + 1) * 8000));
    pts.push(...boardPoints(O, b, rng(40 + i)));
  });
  pts.push(...cl.slice(56_000));
  const path = resolve(dir, "multi.laz");
  writeFileSync(path, lazFile(pts, { offset: [512_000, 6_350_000, 100], chunkSize: 2500 }));

  const every = extractor();
  await readPointCloud(path, O, (xyz, n, seen) => every.add(xyz, n, seen), { threads: 1 });
  const one = extractor();
  let oneCalls = 0;
  await readPointCloud(path, O, (xyz, n, seen) => (oneCalls++, one.add(xyz, n, seen)), { near: one.boxes(), threads: 1 });
  expect(scanPoolCompleted()).toBe(0);
  const pooled = extractor();
  let kept = 0;
  let calls = 0;
  await readPointCloud(
    path,
    O,
    (xyz, n, seen) => {
      kept += n;
      calls++;
      pooled.add(xyz, n, seen);
    },
    { near: pooled.boxes(), threads: 2 },
  );

  // the worker threads did the decoding: one task per four chunks
  expect(scanPoolCompleted()).toBe(Math.ceil(Math.ceil(pts.length / 2500) / 4));
  // every point counted, few handed over: the filter ran
  expect(every.total).toBe(pts.length);
  expect(one.total).toBe(pts.length);
  expect(pooled.total).toBe(pts.length);
  expect(kept).toBeLessThan(pts.length / 3);
  expect(kept).toBeGreaterThanOrEqual(boards.length * 30 * 30);
  // one call per chunk on both filtered paths
  expect(calls).toBe(Math.ceil(pts.length / 2500));
  expect(oneCalls).toBe(calls);

  const ref = every.results();
  expect(one.results()).toEqual(ref);
  expect(pooled.results()).toEqual(ref);
  expect(ref.filter((r) => r.status === "found")).toHaveLength(boards.length);
  boards.forEach((b, i) => {
    const t = boardTruth(O, b);
    expect(Math.abs(ref[i].rangeM! - t.rangeM) * 1000).toBeLessThan(0.2);
  });
});

test("integer boxes hold every point the exact test in metres keeps, at the edges too", () => {
  const header = { scale: [0.0001, 0.001, 0.01] as V3, offset: [512_000, 6_350_000, 100] as V3 };
  const lo = [345.6789 - 0.3, 123.4567 - 0.3, 2.7 - 0.3];
  const hi = [345.6789 + 0.3, 123.4567 + 0.3, 2.7 + 0.3];
  const origin: V3 = [512_000, 6_350_000, 100];
  const b = integerBoxes(lo, hi, header, origin);
  for (let j = 0; j < 3; j++) {
    const s = header.scale[j];
    const o = header.offset[j] - origin[j];
    // the integers around each edge: whoever lands inside [lo, hi] in doubles is inside the box
    for (const edge of [lo[j], hi[j]]) {
      const c = Math.round((edge - o) / s);
      for (let X = c - 3; X <= c + 3; X++) {
        const v = X * s + o;
        if (v >= lo[j] && v <= hi[j]) {
          expect(X).toBeGreaterThanOrEqual(b[2 * j]);
          expect(X).toBeLessThanOrEqual(b[2 * j + 1]);
        }
      }
    }
    // and it is tight: a whole unit or two of slack, not metres
    expect(b[2 * j + 1] - b[2 * j]).toBeLessThanOrEqual(Math.round(0.6 / s) + 6);
  }
});

test("the pool's tasks cover every chunk once, in order: four chunks a task, one a task at the end of a long file", () => {
  for (const [chunks, threads] of [
    [25, 2],
    [63, 2],
    [64, 2],
    [549, 2],
    [549, 8],
    [1, 2],
  ]) {
    const runs = lazTaskRuns(chunks, threads);
    let next = 0;
    for (const [first, n] of runs) {
      expect(first).toBe(next);
      expect(n).toBeGreaterThanOrEqual(1);
      expect(n).toBeLessThanOrEqual(4);
      next += n;
    }
    expect(next).toBe(chunks);
    if (chunks >= 8 * threads * 4) {
      // the last 2 × threads × 4 chunks one a task, the chunks before them four a task
      const tail = 2 * threads * 4;
      expect(runs.slice(-tail).every(([, n]) => n === 1)).toBe(true);
      expect(runs.length).toBe(Math.ceil((chunks - tail) / 4) + tail);
    } else expect(runs.length).toBe(Math.ceil(chunks / 4));
  }
});

test.each([0, 1] as const)("laz-rs on the worker threads (runs of chunks as small LAZ files) keeps exactly the points laz-perf keeps, in the same order (format %i)", async (pointFormat) => {
  const pts: V3[] = [...clutter(O, [], 30_000, rng(9 + pointFormat)), ...boards.flatMap((b, i) => boardPoints(O, b, rng(60 + i)))];
  const path = resolve(dir, `rs-${pointFormat}.laz`);
  // 3 000-point chunks, the last one short
  const tasks = Math.ceil(Math.ceil(pts.length / 3000) / 4);
  expect(pts.length % 3000).not.toBe(0);
  writeFileSync(path, lazFile(pts, { offset: [512_000, 6_350_000, 100], chunkSize: 3000, pointFormat }));
  const read = async (decoder?: "laz-perf") => {
    const ex = extractor();
    const kept: number[] = [];
    const seen: number[] = [];
    const before = scanPoolDecoders();
    await readPointCloud(
      path,
      O,
      (xyz, n, s) => {
        for (let i = 0; i < 3 * n; i++) kept.push(xyz[i]);
        seen.push(s);
        ex.add(xyz, n, s);
      },
      { near: ex.boxes(), threads: 2, decoder },
    );
    const after = scanPoolDecoders();
    return { kept, seen, results: ex.results(), rs: after["laz-rs"] - before["laz-rs"], perf: after["laz-perf"] - before["laz-perf"] };
  };
  const perf = await read("laz-perf");
  const rs = await read();
  // each decoder did the tasks it was meant to
  expect(perf.rs).toBe(0);
  expect(perf.perf).toBe(tasks);
  expect(rs.rs).toBe(tasks);
  expect(rs.perf).toBe(0);
  expect(rs.seen).toEqual(perf.seen);
  expect(rs.seen.reduce((a, b) => a + b, 0)).toBe(pts.length);
  expect(rs.kept.length).toBeGreaterThanOrEqual(3 * boards.length * 30 * 30);
  expect(rs.kept).toEqual(perf.kept);
  expect(rs.results).toEqual(perf.results);
});
