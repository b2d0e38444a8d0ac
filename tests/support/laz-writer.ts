// A minimal LAZ writer for test fixtures (issue 18): LASzip-compatible chunked compression
// ("compressor" 2, coder 0) of LAS 1.2 point formats 0 and 1 (the POINT10 and GPSTIME11 items,
// version 2). No LAZ encoder runs on Node from the npm registry (laz-perf ships only decoders
// in its wasm), so the encoder side is ported from the open LASzip sources as laz-perf carries
// them (M. Isenburg, rapidlasso; Apache-2.0): the coder in laz-encoder.ts, the point items and
// the chunk table in laz-items.ts, the files here (writers.cpp, vlr.cpp: the LASzip VLR).
// tests/integration/laz-writer.test.ts proves the output by decoding it with laz-perf and
// comparing every byte of every point.
import { closeSync, openSync, writeSync } from "node:fs";
import { chunkTable, compressChunk } from "./laz-items";
import { lasHeader, type V3 } from "./scan-fixtures";

export type LazOptions = { scale?: V3; offset?: V3; chunkSize?: number; pointFormat?: 0 | 1 };

/** LAS 1.2 header + LASzip VLR for format 0 or 1 (compressed), `count` points. */
export function lazHeader(count: number, bounds: { min: V3; max: V3 }, o: LazOptions = {}): Uint8Array {
  const fmt = o.pointFormat ?? 0;
  const items = fmt === 1 ? 2 : 1;
  const vlrBytes = 34 + 6 * items;
  const { header } = lasHeader(count, bounds, { version: 2, pointFormat: fmt, scale: o.scale, offset: o.offset, vlrBytes });
  const dv = new DataView(header.buffer);
  header[104] = 0x80 | fmt; // LASzip-compressed (bit 7)
  const at = 227;
  header.fill(0, at + 2, at + 54);
  [..."laszip encoded"].forEach((ch, i) => (header[at + 2 + i] = ch.charCodeAt(0)));
  dv.setUint16(at + 18, 22204, true);
  dv.setUint16(at + 20, vlrBytes, true);
  [..."Shotbook test writer"].forEach((ch, i) => (header[at + 22 + i] = ch.charCodeAt(0)));
  const b = at + 54;
  dv.setUint16(b, 2, true); // compressor: pointwise chunked
  dv.setUint16(b + 2, 0, true); // coder: arithmetic
  header[b + 4] = 2; // LASzip version 2.2 r0
  header[b + 5] = 2;
  dv.setUint16(b + 6, 0, true);
  dv.setUint32(b + 8, 0, true); // options
  dv.setUint32(b + 12, o.chunkSize ?? 50_000, true);
  dv.setBigInt64(b + 16, -1n, true); // number of special EVLRs: none
  dv.setBigInt64(b + 24, -1n, true);
  dv.setUint16(b + 32, items, true); // POINT10 (type 6), 20 bytes, version 2; GPSTIME11 (type 7), 8 bytes, version 2
  dv.setUint16(b + 34, 6, true);
  dv.setUint16(b + 36, 20, true);
  dv.setUint16(b + 38, 2, true);
  if (fmt === 1) {
    dv.setUint16(b + 40, 7, true);
    dv.setUint16(b + 42, 8, true);
    dv.setUint16(b + 44, 2, true);
  }
  return header;
}

/**
 * Point records (format 0: 20 bytes, format 1: 28 with the GPS time, here 0.1 ms apart from
 * 1 000 000 s) of absolute coordinates; `fill` sets the other fields of record i.
 */
export function point10Records(points: ArrayLike<number>, count: number, o: LazOptions = {}, fill?: (dv: DataView, at: number, i: number) => void): Uint8Array {
  const scale = o.scale ?? [0.0001, 0.0001, 0.0001];
  const offset = o.offset ?? [0, 0, 0];
  const len = o.pointFormat === 1 ? 28 : 20;
  const buf = new Uint8Array(count * len);
  const dv = new DataView(buf.buffer);
  for (let i = 0; i < count; i++) {
    for (let k = 0; k < 3; k++) dv.setInt32(len * i + 4 * k, Math.round((points[3 * i + k] - offset[k]) / scale[k]), true);
    dv.setUint16(len * i + 12, 1000, true);
    dv.setUint8(len * i + 14, 0b001001); // return 1 of 1
    if (len === 28) dv.setFloat64(len * i + 20, 1_000_000 + i * 1e-4, true);
    if (fill) fill(dv, len * i, i);
  }
  return buf;
}

/**
 * Writes a LAZ file to `path` from blocks of absolute xyz (metres) that `next` yields until it
 * returns null (it is told the bytes written so far); points go out chunk by chunk, so a file
 * of any size is written in bounded memory.
 * Returns the point count.
 */
export function writeLazFile(path: string, bounds: { min: V3; max: V3 }, next: (bytesSoFar: number) => Float64Array | null, o: LazOptions = {}): { points: number; bytes: number } {
  const chunkSize = o.chunkSize ?? 50_000;
  let pending = new Float64Array(0);
  const ready: { bytes: Uint8Array; points: number }[] = [];
  const compress = (xyz: Float64Array, n: number) => ready.push({ bytes: compressChunk(point10Records(xyz, n, o), n, o.pointFormat ?? 0), points: n });
  let ended = false;
  return writeLazChunks(
    path,
    bounds,
    (pos) => {
      while (!ready.length && !ended) {
        const block = next(pos);
        if (!block) {
          ended = true;
          if (pending.length) compress(pending, pending.length / 3);
          break;
        }
        const all = new Float64Array(pending.length + block.length);
        all.set(pending);
        all.set(block, pending.length);
        let at = 0;
        for (; all.length - at >= 3 * chunkSize; at += 3 * chunkSize) compress(all.subarray(at, at + 3 * chunkSize), chunkSize);
        pending = all.slice(at);
      }
      return ready.shift() ?? null;
    },
    o,
  );
}

/**
 * Writes a LAZ file from compressed chunks (compressChunk's output, `points` each) that `next`
 * yields until it returns null (it is told the bytes written so far), then the chunk table and
 * the header's counts. Memory: one chunk at a time.
 */
export function writeLazChunks(
  path: string,
  bounds: { min: V3; max: V3 },
  next: (bytesSoFar: number) => { bytes: Uint8Array; points: number } | null,
  o: LazOptions = {},
): { points: number; bytes: number } {
  const fd = openSync(path, "w");
  try {
    const head = lazHeader(0, bounds, o);
    writeSync(fd, head);
    writeSync(fd, new Uint8Array(8)); // the chunk table offset, filled in at the end
    let pos = head.length + 8;
    const sizes: number[] = [];
    let total = 0;
    for (let c = next(pos); c; c = next(pos)) {
      writeSync(fd, c.bytes, 0, c.bytes.length, pos);
      pos += c.bytes.length;
      sizes.push(c.bytes.length);
      total += c.points;
    }
    const tableAt = pos;
    const table = chunkTable(sizes);
    writeSync(fd, table, 0, table.length, pos);
    pos += table.length;
    // the header's counts now that they are known, and where the table is
    const final = lazHeader(total, bounds, o);
    writeSync(fd, final, 0, final.length, 0);
    const at8 = new Uint8Array(8);
    new DataView(at8.buffer).setBigInt64(0, BigInt(tableAt), true);
    writeSync(fd, at8, 0, 8, head.length);
    return { points: total, bytes: pos };
  } finally {
    closeSync(fd);
  }
}

/**
 * A copy of a compressed chunk moved by whole units (dX, dY) in X and Y: a chunk's first point
 * is stored raw and every other X and Y is coded as a difference from the point before
 * (field_point10.cpp), so moving the first point moves them all, with no re-encoding. (Z is
 * predicted from heights that start at 0 in every chunk, so it cannot be moved this way.)
 */
export function shiftChunk(chunk: Uint8Array, dX: number, dY: number): Uint8Array {
  const out = chunk.slice();
  const dv = new DataView(out.buffer);
  dv.setInt32(0, dv.getInt32(0, true) + dX, true);
  dv.setInt32(4, dv.getInt32(4, true) + dY, true);
  return out;
}

/** A whole LAZ file in memory from point records (format 0 or 1), for small fixtures. */
export function lazFileFromRecords(records: Uint8Array, count: number, bounds: { min: V3; max: V3 }, o: LazOptions = {}): Uint8Array {
  const chunkSize = o.chunkSize ?? 50_000;
  const head = lazHeader(count, bounds, o);
  const chunks: Uint8Array[] = [];
  const len = o.pointFormat === 1 ? 28 : 20;
  for (let at = 0; at < count; at += chunkSize) {
    const n = Math.min(chunkSize, count - at);
    chunks.push(compressChunk(records.subarray(len * at, len * (at + n)), n, o.pointFormat ?? 0));
  }
  const table = chunkTable(chunks.map((c) => c.length));
  const size = head.length + 8 + chunks.reduce((s, c) => s + c.length, 0) + table.length;
  const out = new Uint8Array(size);
  out.set(head, 0);
  let pos = head.length + 8;
  for (const c of chunks) {
    out.set(c, pos);
    pos += c.length;
  }
  new DataView(out.buffer).setBigInt64(head.length, BigInt(pos), true);
  out.set(table, pos);
  return out;
}

/** A LAZ file of these absolute points (the LAZ twin of scan-fixtures' lasFile). */
export function lazFile(points: V3[], o: LazOptions = {}): Uint8Array {
  const min: V3 = [Infinity, Infinity, Infinity];
  const max: V3 = [-Infinity, -Infinity, -Infinity];
  for (const p of points)
    for (let k = 0; k < 3; k++) {
      min[k] = Math.min(min[k], p[k]);
      max[k] = Math.max(max[k], p[k]);
    }
  return lazFileFromRecords(point10Records(points.flat(), points.length, o), points.length, { min, max }, o);
}
