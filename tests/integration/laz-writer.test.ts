import { mkdirSync, readFileSync, writeFileSync } from "node:fs";
import { resolve } from "node:path";
import { expect, test } from "vitest";
import { createLazPerf } from "laz-perf";
import { readPointCloud } from "~/scan/point-cloud.server";
import { parseLasHeader } from "~/scan/las";
import { compressChunk } from "../support/laz-items";
import { lazFileFromRecords, point10Records, shiftChunk, writeLazChunks, writeLazFile } from "../support/laz-writer";
import { rng, type V3 } from "../support/scan-fixtures";

// The test-only LAZ writer (tests/support/laz-writer.ts, ported from the LASzip encoder) proved
// against laz-perf (the LASzip decoder compiled to WebAssembly, from the npm registry): every
// byte of every point record it wrote comes back from laz-perf's whole-file reader. Then the
// app's streaming reader (chunk table decoded in JS, laz-perf's ChunkDecoder per chunk) on the
// same files.

const dir = resolve(process.env.DATA_DIR!, "laz");
mkdirSync(dir, { recursive: true });

/**
 * Records whose every field moves: returns, intensity, classification, angle, user data, source;
 * in format 1 also the GPS time: regular pulses, repeats (several returns of one pulse), pulses
 * missed, gaps, steps back, and jumps to other time sequences (flight lines) and back.
 */
function busyRecords(n: number, seed: number, pointFormat: 0 | 1 = 0) {
  const r = rng(seed);
  const xyz = new Float64Array(3 * n);
  let x = 512_000;
  for (let i = 0; i < n; i++) {
    // mostly small steps, now and then a jump of kilometres (large correctors, k > 8)
    x += i % 97 === 0 ? (r.uniform() - 0.5) * 4000 : (r.uniform() - 0.5) * 0.05;
    xyz[3 * i] = x;
    xyz[3 * i + 1] = 6_350_000 + (i % 89 === 0 ? r.uniform() * 1000 : r.uniform() * 0.3);
    xyz[3 * i + 2] = 100 + r.normal() * (i % 50 === 0 ? 50 : 0.02);
  }
  const lines = [1_000_000.5, 1_003_600.25, 250_000_000.125, 1e9];
  let line = 0;
  let gps = lines[0];
  const records = point10Records(xyz, n, { offset: [512_000, 6_350_000, 100], pointFormat }, (dv, at, i) => {
    if (pointFormat === 1) {
      const u = r.uniform();
      if (u < 0.02) {
        line = (line + 1 + Math.floor(r.uniform() * 3)) % 4;
        gps = lines[line] + r.uniform() * 10;
      } else if (u < 0.3) {
        /* another return of the same pulse: the same time */
      } else if (u < 0.33)
        gps += r.uniform() * 5; // a gap
      else if (u < 0.35)
        gps -= r.uniform() * 1e-3; // a step back
      else if (u < 0.4)
        gps += 1e-5 * (2 + Math.floor(r.uniform() * 8)); // a few pulses missed
      else if (u < 0.43)
        gps += 1e-5 * (10 + Math.floor(r.uniform() * 480)); // many missed
      else gps += 1e-5 * (1 + (i % 3 === 0 ? 0 : r.uniform() * 1e-3));
      lines[line] = gps;
      dv.setFloat64(at + 20, gps, true);
    }
    const nret = 1 + Math.floor(r.uniform() * (i % 3 === 0 ? 5 : 1));
    const ret = 1 + Math.floor(r.uniform() * nret);
    dv.setUint16(at + 12, i % 7 === 0 ? Math.floor(r.uniform() * 65536) : 1000 + (i % 5), true);
    dv.setUint8(at + 14, ret | (nret << 3) | ((i >> 4) & 1 ? 0x40 : 0) | (i % 211 === 0 ? 0x80 : 0));
    dv.setUint8(at + 15, i % 13 === 0 ? Math.floor(r.uniform() * 32) : 2);
    dv.setUint8(at + 16, (Math.floor(r.uniform() * 60) - 30) & 0xff);
    dv.setUint8(at + 17, i % 17 === 0 ? Math.floor(r.uniform() * 256) : 0);
    dv.setUint16(at + 18, i % 1000 === 0 ? Math.floor(r.uniform() * 65536) : 7, true);
  });
  return records;
}

async function lazPerfDecode(bytes: Uint8Array) {
  const m = await createLazPerf();
  const filePtr = m._malloc(bytes.length);
  m.HEAPU8.set(bytes, filePtr);
  const laz = new m.LASZip();
  laz.open(filePtr, bytes.length);
  const count = laz.getCount();
  const len = laz.getPointLength();
  const out = new Uint8Array(count * len);
  const p = m._malloc(len);
  for (let i = 0; i < count; i++) {
    laz.getPoint(p);
    out.set(m.HEAPU8.subarray(p, p + len), i * len);
  }
  laz.delete();
  m._free(p);
  m._free(filePtr);
  return { count, len, out };
}

test.each([
  ["format 0, several chunks and a last chunk of one point", 12_001, 2000, 0],
  ["format 0, one chunk", 3000, 50_000, 0],
  ["format 0, a single point", 1, 50_000, 0],
  ["format 1 (GPS time), several chunks", 20_001, 4000, 1],
  ["format 1 (GPS time), a single point", 1, 50_000, 1],
] as const)("laz-perf decodes every point the writer encoded (%s)", async (_name, n, chunkSize, pointFormat) => {
  const records = busyRecords(n, n, pointFormat);
  const bytes = lazFileFromRecords(records, n, { min: [0, 0, 0], max: [1, 1, 1] }, { offset: [512_000, 6_350_000, 100], chunkSize, pointFormat });
  expect(parseLasHeader(bytes).compressed).toBe(true);
  expect(parseLasHeader(bytes).pointFormat).toBe(pointFormat);
  const theirs = await lazPerfDecode(bytes);
  expect(theirs.count).toBe(n);
  expect(theirs.len).toBe(pointFormat === 1 ? 28 : 20);
  let firstBad = -1;
  for (let i = 0; i < records.length; i++) {
    if (records[i] !== theirs.out[i]) {
      firstBad = i;
      break;
    }
  }
  expect(firstBad).toBe(-1);
  // and it is compressed: busy records of 20 bytes come out well under 20 bytes each
  if (n > 1000) expect(bytes.length / n).toBeLessThan(pointFormat === 1 ? 20 : 14);
});

test("the streaming reader returns the same points as the writer's input, chunk by chunk, from a file on disk", async () => {
  const n = 25_000;
  const origin: V3 = [512_345.6789, 6_350_123.4567, 101.2345];
  const records = busyRecords(n, 5);
  const path = resolve(dir, "stream.laz");
  // written through the block-streaming writer, 3 000-point chunks
  const dv = new DataView(records.buffer);
  let at = 0;
  const xyzAll = new Float64Array(3 * n);
  for (let i = 0; i < n; i++) for (let k = 0; k < 3; k++) xyzAll[3 * i + k] = dv.getInt32(20 * i + 4 * k, true) * 0.0001 + [512_000, 6_350_000, 100][k];
  const info = writeLazFile(
    path,
    { min: [0, 0, 0], max: [1, 1, 1] },
    () => {
      if (at >= n) return null;
      const block = xyzAll.slice(3 * at, 3 * Math.min(n, at + 7_000));
      at += 7_000;
      return block;
    },
    { offset: [512_000, 6_350_000, 100], chunkSize: 3000 },
  );
  expect(info.points).toBe(n);
  const ours: number[] = [];
  const header = await readPointCloud(path, origin, (xyz, k) => {
    for (let i = 0; i < 3 * k; i++) ours.push(xyz[i]);
  });
  expect(header.pointCount).toBe(n);
  expect(ours.length).toBe(3 * n);
  let worst = 0;
  for (let i = 0; i < n; i++) for (let k = 0; k < 3; k++) worst = Math.max(worst, Math.abs(ours[3 * i + k] - (xyzAll[3 * i + k] - origin[k])));
  expect(worst).toBeLessThan(1e-9);
  // laz-perf's whole-file reader agrees on the same file
  const theirs = await lazPerfDecode(new Uint8Array(readFileSync(path)));
  expect(theirs.count).toBe(n);
});

test("LAZ faults get specific errors: no LASzip record, no chunks, a chunk table outside the file", async () => {
  const n = 5000;
  const good = lazFileFromRecords(busyRecords(n, 9), n, { min: [0, 0, 0], max: [1, 1, 1] }, { chunkSize: 1000 });
  const noVlr = Uint8Array.from(good);
  noVlr.set(new TextEncoder().encode("someone else   "), 227 + 2);
  writeFileSync(resolve(dir, "novlr.laz"), noVlr);
  await expect(readPointCloud(resolve(dir, "novlr.laz"), [0, 0, 0], () => {})).rejects.toThrow(/no LASzip record/);
  const badTable = Uint8Array.from(good);
  new DataView(badTable.buffer).setBigInt64(parseLasHeader(good).pointsOffset, BigInt(good.length + 100), true);
  writeFileSync(resolve(dir, "badtable.laz"), badTable);
  await expect(readPointCloud(resolve(dir, "badtable.laz"), [0, 0, 0], () => {})).rejects.toThrow(/chunk table offset points outside the file/);
  const unchunked = Uint8Array.from(good);
  new DataView(unchunked.buffer).setUint16(227 + 54, 1, true); // LASzip compressor 1: no chunks
  writeFileSync(resolve(dir, "unchunked.laz"), unchunked);
  await expect(readPointCloud(resolve(dir, "unchunked.laz"), [0, 0, 0], () => {})).rejects.toThrow(/without chunks \(LASzip compressor 1\); re-compress it/);
  const cut = good.subarray(0, Math.floor(good.length / 2));
  writeFileSync(resolve(dir, "cut.laz"), cut);
  await expect(readPointCloud(resolve(dir, "cut.laz"), [0, 0, 0], () => {})).rejects.toThrow(/chunk table offset points outside the file/);
});

test("shifted copies of compressed chunks (how the scan bench fills its file) decode, by laz-perf, to the records moved by the shifts", async () => {
  const per = 1500;
  const distinct = [busyRecords(per, 11), busyRecords(per, 12), busyRecords(per, 13)];
  const compressed = distinct.map((r) => compressChunk(r, per, 0));
  const r = rng(21);
  const shifts: [number, number][] = Array.from({ length: 10 }, () => [Math.round((r.uniform() - 0.5) * 1e5), Math.round((r.uniform() - 0.5) * 1e5)]);
  const path = resolve(dir, "copies.laz");
  let copy = 0;
  const info = writeLazChunks(path, { min: [0, 0, 0], max: [1, 1, 1] }, () => (copy < shifts.length ? { bytes: shiftChunk(compressed[copy % 3], ...shifts[copy++]), points: per } : null), {
    offset: [512_000, 6_350_000, 100],
    chunkSize: per,
  });
  expect(info.points).toBe(10 * per);
  const theirs = await lazPerfDecode(new Uint8Array(readFileSync(path)));
  expect(theirs.count).toBe(10 * per);
  const got = new DataView(theirs.out.buffer);
  let bad = 0;
  let moved = 0;
  for (let c = 0; c < shifts.length; c++) {
    const want = new DataView(distinct[c % 3].buffer);
    for (let i = 0; i < per; i++) {
      const at = 20 * (c * per + i);
      // X and Y moved by the copy's shift, every other byte as written
      if (got.getInt32(at, true) !== want.getInt32(20 * i, true) + shifts[c][0]) bad++;
      if (got.getInt32(at + 4, true) !== want.getInt32(20 * i + 4, true) + shifts[c][1]) bad++;
      for (let b = 8; b < 20; b++) if (got.getUint8(at + b) !== want.getUint8(20 * i + b)) bad++;
      if (shifts[c][0] !== 0 && got.getInt32(at, true) !== want.getInt32(20 * i, true)) moved++;
    }
  }
  expect(bad).toBe(0);
  expect(moved).toBeGreaterThan(9 * per);
});
