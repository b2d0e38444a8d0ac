// Bench of check-shots from a point cloud (issue 18, ranging.md §8): generates a LAS 1.2 file and
// a LAZ file (LASzip-compressed, written by tests/support/laz-writer.ts) of BENCH_SCAN_MB
// megabytes each (200 by default) with a dozen boards among clutter, then, in a child process
// per file, streams it through the multipart reader to disk (as POST /api/scans receives it) and
// runs the one-pass extraction over it (the LAZ decoded chunk by chunk). Prints the extraction
// rate (million points/s) and the child's peak RSS. Prints, never asserts. Targets: ≥ 5 M
// points per wall-second (the figure judged; the load average beside it says how busy the
// machine was), < 400 MB RSS; the rate per CPU-second (all threads of the child) is printed
// too. The LAZ file is decoded on SCAN_WORKERS threads (default: the machine's cores; laz-rs,
// app/scan/laz-rs.ts), and for comparison on one thread and on the threads with laz-perf only.
// Run alone: npx tsx tests/bench/run.ts scan   (BENCH_SCAN=0 skips it; BENCH_SCAN_LAZ=0 skips
// the LAZ file)
import { spawnSync } from "node:child_process";
import { closeSync, mkdtempSync, openSync, rmSync, writeSync } from "node:fs";
import { loadavg, tmpdir } from "node:os";
import { join } from "node:path";
import { fileURLToPath } from "node:url";
import { compressChunk } from "../support/laz-items";
import { point10Records, shiftChunk, writeLazChunks } from "../support/laz-writer";
import { target } from "./targets";
import { boardPoints, lasHeader, lasRecords, rng, type Board, type V3 } from "../support/scan-fixtures";

const MB = Number(process.env.BENCH_SCAN_MB ?? 200);
/** Distinct clutter chunks compressed for the LAZ file (the rest are shifted copies). */
const LAZ_DISTINCT = 16;

export async function run(): Promise<string[]> {
  if (process.env.BENCH_SCAN === "0") return ["  skipped (BENCH_SCAN=0)"];
  const dir = mkdtempSync(join(tmpdir(), "shotbook-scan-bench-"));
  try {
    const path = join(dir, "bench.las");
    const O: V3 = [512_345.6789, 6_350_123.4567, 102.7];
    const boards: Board[] = Array.from({ length: 12 }, (_, i) => {
      const a = (i / 12) * 2 * Math.PI;
      const d = 10 + i * 8;
      return { centre: [O[0] + d * Math.cos(a), O[1] + d * Math.sin(a), O[2] + (i % 3) - 1], offsetMm: i - 6, tiltDeg: (i * 5) % 60, halfM: 0.2, perSide: 60, noiseMm: 1.5 };
    });
    const opts = { version: 2 as const, pointFormat: 1, offset: [512_000, 6_350_000, 100] as V3 };
    const recordLength = 28;
    const total = Math.floor((MB * 1e6 - 227) / recordLength);
    const t0 = performance.now();
    const fd = openSync(path, "w");
    const { header } = lasHeader(total, { min: [O[0] - 100, O[1] - 100, O[2] - 10], max: [O[0] + 100, O[1] + 100, O[2] + 10] }, opts);
    writeSync(fd, header);
    const boardPts = boards.flatMap((b, i) => boardPoints(O, b, rng(i + 1)));
    writeSync(fd, lasRecords(boardPts, recordLength, opts));
    const BLOCK = 200_000;
    // a scanner's spread: ground, walls and trees within 100 m, none on the boards
    const clutterBlock = (r: ReturnType<typeof rng>, n: number) => {
      const xyz = new Float64Array(3 * n);
      for (let i = 0; i < n; i++) {
        xyz[3 * i] = O[0] + (r.uniform() - 0.5) * 200;
        xyz[3 * i + 1] = O[1] + (r.uniform() - 0.5) * 200;
        xyz[3 * i + 2] = O[2] - 1.6 + r.uniform() * (i % 4 === 0 ? 12 : 0.05);
      }
      return xyz;
    };
    let r = rng(77);
    for (let done = boardPts.length; done < total;) {
      const n = Math.min(BLOCK, total - done);
      writeSync(fd, lasRecords(clutterBlock(r, n), recordLength, opts));
      done += n;
    }
    closeSync(fd);
    const made = (performance.now() - t0) / 1000;
    const lines = [`  LAS: generated ${MB} MB LAS 1.2 (format 1, ${(total / 1e6).toFixed(2)} M points, 12 boards) in ${made.toFixed(1)} s`, ...measure(path, "bench.las", total, MB, O, boards)];
    rmSync(path, { force: true });
    if (process.env.BENCH_SCAN_LAZ === "0") return [...lines, "  LAZ: skipped (BENCH_SCAN_LAZ=0)"];

    // The same scene LASzip-compressed (format 0) until the file is MB megabytes. Compressing
    // every point took most of the bench (~3 µs a point, 27 M points), so only the first chunk
    // (the boards and clutter) and LAZ_DISTINCT chunks of clutter are compressed; the file is
    // then filled with copies of those, each moved by its own random shift of up to ±5 m in X
    // and Y (shiftChunk: only a chunk's first point is stored raw). Still a valid LAZ of
    // distinct points that the extraction decodes one by one.
    const lazPath = join(dir, "bench.laz");
    const t1 = performance.now();
    r = rng(78);
    const lazOpts = { offset: opts.offset };
    const CHUNK = 50_000;
    const compress = (xyz: Float64Array) => ({ bytes: compressChunk(point10Records(xyz, xyz.length / 3, lazOpts), xyz.length / 3, 0), points: xyz.length / 3 });
    const firstXyz = new Float64Array(3 * CHUNK);
    firstXyz.set(boardPts.flat());
    firstXyz.set(clutterBlock(r, CHUNK - boardPts.length), 3 * boardPts.length);
    const distinct = Array.from({ length: LAZ_DISTINCT }, () => compress(clutterBlock(r, CHUNK)));
    const shifts = rng(79);
    const unit = 0.0001; // point10Records' default scale
    let copies = -1;
    const written = writeLazChunks(
      lazPath,
      { min: [O[0] - 105, O[1] - 105, O[2] - 10], max: [O[0] + 105, O[1] + 105, O[2] + 10] },
      (bytes) => {
        if (++copies === 0) return compress(firstXyz);
        if (bytes >= MB * 1e6) return null;
        const c = distinct[(copies - 1) % LAZ_DISTINCT];
        const d = () => Math.round(((shifts.uniform() - 0.5) * 10) / unit);
        return { bytes: shiftChunk(c.bytes, d(), d()), points: c.points };
      },
      lazOpts,
    );
    const madeLaz = (performance.now() - t1) / 1000;
    const lazMb = written.bytes / 1e6;
    return [
      ...lines,
      `  LAZ: generated ${lazMb.toFixed(0)} MB LAZ 1.2 (format 0, LASzip chunks of 50 000, ${(written.points / 1e6).toFixed(2)} M points, ${(written.bytes / written.points).toFixed(1)} bytes/point; ${LAZ_DISTINCT + 1} chunks compressed, the rest shifted copies) in ${madeLaz.toFixed(1)} s`,
      // comparisons in the same run (information only): the same file on one thread (laz-perf,
      // the pool's before/after) and on the pool with laz-perf only (laz-rs's before/after)
      ...measure(lazPath, "bench.laz", written.points, lazMb, O, boards, "1"),
      ...measure(lazPath, "bench.laz", written.points, lazMb, O, boards, undefined, "laz-perf"),
      ...measure(lazPath, "bench.laz", written.points, lazMb, O, boards),
    ];
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

/** Upload and extraction of one file in a child process of its own (its peak RSS is theirs). */
function measure(path: string, name: string, total: number, MB: number, O: V3, boards: Board[], scanWorkers?: string, decoder?: "laz-perf"): string[] {
  const child = spawnSync(
    process.execPath,
    ["--import", "tsx", fileURLToPath(new URL("./scan-child.ts", import.meta.url)), path, JSON.stringify(O), JSON.stringify(boards.map((b) => b.centre)), name, ...(decoder ? [decoder] : [])],
    {
      encoding: "utf8",
      env: scanWorkers ? { ...process.env, SCAN_WORKERS: scanWorkers } : { ...process.env },
      maxBuffer: 1 << 20,
    },
  );
  if (child.status !== 0) throw new Error(child.stderr || child.stdout || `child exited ${child.status}`);
  const m = JSON.parse(child.stdout.trim().split("\n").pop()!);
  const kind = name.endsWith(".laz") ? (m.threads > 1 ? `LAZ (${m.threads} threads${decoder ? `, ${decoder} only` : ""})` : "LAZ (one thread, laz-perf)") : "LAS";
  const wall = total / m.extractS / 1e6;
  const load = loadavg()[0];
  return [
    `    upload streamed to disk (multipart, SHA-256): ${m.uploadS.toFixed(2)} s (${(MB / m.uploadS).toFixed(0)} MB/s)`,
    ...(m.threads > 1 && name.endsWith(".laz") ? [`    ${kind}: ${m.threads} worker threads started first in ${m.warmS.toFixed(2)} s (CPU ${m.warmCpuS.toFixed(2)} s), not counted below`] : []),
    `    ${kind} extraction, one pass: ${m.extractS.toFixed(2)} s = ${wall.toFixed(1)} M points per wall-second; CPU ${m.extractCpuS.toFixed(2)} s = ${(total / m.extractCpuS / 1e6).toFixed(1)} M points per CPU-second; load average ${m.load.toFixed(1)} before, ${load.toFixed(1)} after, on ${m.cores} cores`,
    `    targets found ${m.found}/12, worst |range − analytic| ${m.worstMm.toFixed(3)} mm`,
    `    peak RSS of the process (upload + extraction): ${(m.maxRssKb / 1024).toFixed(0)} MB (target < 400 MB)`,
    // The one-thread and laz-perf-only LAZ runs are comparisons, not the product's default path: information only.
    ...(scanWorkers === "1" && name.endsWith(".laz")
      ? [`    (comparison with SCAN_WORKERS=1, not a target: the server decodes a LAZ on its worker pool by default)`]
      : decoder
        ? [`    (comparison, not a target: the worker threads decode fixed-size chunks with laz-rs by default)`]
        : [
            target(`${kind} extraction ≥ 5 M points per wall-second (judged on wall time at load ${m.load.toFixed(1)})`, `${wall.toFixed(1)} M points/s`, wall >= 5),
            target(`${kind} extraction peak RSS < 400 MB`, `${(m.maxRssKb / 1024).toFixed(0)} MB`, m.maxRssKb / 1024 < 400),
          ]),
  ];
}
