// A minimal LAZ writer for test fixtures (issue 18): LASzip-compatible chunked compression
// ("compressor" 2, coder 0) of LAS 1.2 point formats 0 and 1 (the POINT10 and GPSTIME11 items,
// version 2). No LAZ encoder runs on Node from the npm registry (laz-perf ships only decoders
// in its wasm), so the encoder side is ported from the open LASzip sources as laz-perf carries
// them (M. Isenburg, rapidlasso; Apache-2.0): cpp/lazperf/encoder.hpp (arithmetic encoder),
// compressor.hpp (integer compressor), detail/field_point10.cpp (Point10Compressor),
// detail/field_gpstime10.cpp (Gpstime10Compressor), utils.hpp (streaming_median), writers.cpp
// and lazperf.cpp (chunk table, compress_chunk_table), vlr.cpp (the LASzip VLR). The adaptive
// models are shared with the app's chunk-table decoder (app/scan/laszip.ts).
// tests/integration/laz-writer.test.ts proves the output by decoding it with laz-perf and
// comparing every byte of every point.
import { closeSync, openSync, writeSync } from "node:fs";
import { AC_MAX_LENGTH, AC_MIN_LENGTH, BitModel, BM_LENGTH_SHIFT, DM_LENGTH_SHIFT, IntegerModels, SymbolModel } from "~/scan/laszip";
import { lasHeader, type V3 } from "./scan-fixtures";

class ByteSink {
  buf = new Uint8Array(1 << 16);
  len = 0;
  push(b: number) {
    if (this.len === this.buf.length) {
      const next = new Uint8Array(this.buf.length * 2);
      next.set(this.buf);
      this.buf = next;
    }
    this.buf[this.len++] = b;
  }
  bytes() {
    return this.buf.slice(0, this.len);
  }
}

/** The arithmetic encoder (LASzip arithmeticencoder.cpp), writing into a growable buffer. */
export class ArithmeticEncoder {
  private base = 0;
  private length = AC_MAX_LENGTH;
  constructor(readonly out: ByteSink) {}

  private propagateCarry() {
    let p = this.out.len - 1;
    while (this.out.buf[p] === 0xff) this.out.buf[p--] = 0;
    this.out.buf[p]++;
  }
  private renorm() {
    do {
      this.out.push(this.base >>> 24);
      this.base = (this.base << 8) >>> 0;
      this.length = (this.length << 8) >>> 0;
    } while (this.length < AC_MIN_LENGTH);
  }
  private add(x: number) {
    const init = this.base;
    this.base = (this.base + x) >>> 0;
    if (init > this.base) this.propagateCarry();
  }
  encodeBit(m: BitModel, sym: number) {
    const x = Math.imul(m.bit0Prob, this.length >>> BM_LENGTH_SHIFT) >>> 0;
    if (sym === 0) {
      this.length = x;
      ++m.bit0Count;
    } else {
      this.add(x);
      this.length = (this.length - x) >>> 0;
    }
    if (this.length < AC_MIN_LENGTH) this.renorm();
    if (--m.bitsUntilUpdate === 0) m.update();
  }
  encodeSymbol(m: SymbolModel, sym: number) {
    if (sym < 0 || sym > m.lastSymbol) throw new Error(`symbol ${sym} outside the model`);
    let x: number;
    if (sym === m.lastSymbol) {
      x = Math.imul(m.distribution[sym], this.length >>> DM_LENGTH_SHIFT) >>> 0;
      this.add(x);
      this.length = (this.length - x) >>> 0;
    } else {
      this.length = this.length >>> DM_LENGTH_SHIFT;
      x = Math.imul(m.distribution[sym], this.length) >>> 0;
      this.add(x);
      this.length = (Math.imul(m.distribution[sym + 1], this.length) - x) >>> 0;
    }
    if (this.length < AC_MIN_LENGTH) this.renorm();
    ++m.symbolCount[sym];
    if (--m.symbolsUntilUpdate === 0) m.update();
  }
  writeBits(bits: number, sym: number) {
    if (bits > 19) {
      this.writeBits(16, sym & 0xffff);
      sym = sym >>> 16;
      bits -= 16;
    }
    this.length = this.length >>> bits;
    this.add(Math.imul(sym, this.length) >>> 0);
    if (this.length < AC_MIN_LENGTH) this.renorm();
  }
  /** Integer compression: codes real − pred as a corrector (compressor.hpp). */
  compressInt(ic: IntegerModels, pred: number, real: number, context: number) {
    let corr = ic.corrRange === 0 ? (real - pred) | 0 : real - pred;
    if (corr < ic.corrMin) corr += ic.corrRange;
    else if (corr > ic.corrMax) corr -= ic.corrRange;
    this.writeCorrector(ic, corr, ic.mBits[context]);
  }
  private writeCorrector(ic: IntegerModels, c: number, mBits: SymbolModel) {
    let c1 = c <= 0 ? -c : c - 1;
    let k = 0;
    for (; c1; k++) c1 = Math.floor(c1 / 2);
    ic.k = k;
    this.encodeSymbol(mBits, k);
    if (k) {
      if (k === 32) return;
      if (c < 0) c += 2 ** k - 1;
      else c -= 1;
      if (k <= ic.bitsHigh) this.encodeSymbol(ic.mCorrector[k - 1], c);
      else {
        const k1 = k - ic.bitsHigh;
        c1 = c % 2 ** k1;
        c = Math.floor(c / 2 ** k1);
        this.encodeSymbol(ic.mCorrector[k - 1], c);
        this.writeBits(k1, c1);
      }
    } else this.encodeBit(ic.mCorrector0, c);
  }
  /** Ends the stream so that a decoder reading it consumes exactly these bytes. */
  done() {
    const init = this.base;
    let anotherByte = true;
    if (this.length > 2 * AC_MIN_LENGTH) {
      this.base = (this.base + AC_MIN_LENGTH) >>> 0;
      this.length = AC_MIN_LENGTH >>> 1;
    } else {
      this.base = (this.base + (AC_MIN_LENGTH >>> 1)) >>> 0;
      this.length = AC_MIN_LENGTH >>> 9;
      anotherByte = false;
    }
    if (init > this.base) this.propagateCarry();
    this.renorm();
    this.out.push(0);
    this.out.push(0);
    if (anotherByte) this.out.push(0);
  }
}

/** LASzip's running median of the last five values (utils.hpp streaming_median). */
class Median5 {
  v = [0, 0, 0, 0, 0];
  high = true;
  add(x: number) {
    const v = this.v;
    if (this.high) {
      if (x < v[2]) {
        v[4] = v[3];
        v[3] = v[2];
        if (x < v[0]) {
          v[2] = v[1];
          v[1] = v[0];
          v[0] = x;
        } else if (x < v[1]) {
          v[2] = v[1];
          v[1] = x;
        } else v[2] = x;
      } else {
        if (x < v[3]) {
          v[4] = v[3];
          v[3] = x;
        } else v[4] = x;
        this.high = false;
      }
    } else {
      if (v[2] < x) {
        v[0] = v[1];
        v[1] = v[2];
        if (v[4] < x) {
          v[2] = v[3];
          v[3] = v[4];
          v[4] = x;
        } else if (v[3] < x) {
          v[2] = v[3];
          v[3] = x;
        } else v[2] = x;
      } else {
        if (v[1] < x) {
          v[0] = v[1];
          v[1] = x;
        } else v[0] = x;
        this.high = true;
      }
    }
  }
  get() {
    return this.v[2];
  }
}

// LASzip's context maps from (number of returns n, return number r), field_point10.cpp
const NUMBER_RETURN_MAP = [
  [15, 14, 13, 12, 11, 10, 9, 8],
  [14, 0, 1, 3, 6, 10, 10, 9],
  [13, 1, 2, 4, 7, 11, 11, 10],
  [12, 3, 4, 5, 8, 12, 12, 11],
  [11, 6, 7, 8, 9, 13, 13, 12],
  [10, 10, 11, 12, 13, 14, 14, 13],
  [9, 10, 11, 12, 13, 14, 15, 14],
  [8, 9, 10, 11, 12, 13, 14, 15],
];
const NUMBER_RETURN_LEVEL = Array.from({ length: 8 }, (_, n) => Array.from({ length: 8 }, (_, r) => Math.abs(n - r)));

type P10 = { x: number; y: number; z: number; intensity: number; bits: number; cls: number; angle: number; user: number; source: number };
function unpack(dv: DataView, o: number): P10 {
  return {
    x: dv.getInt32(o, true),
    y: dv.getInt32(o + 4, true),
    z: dv.getInt32(o + 8, true),
    intensity: dv.getUint16(o + 12, true),
    bits: dv.getUint8(o + 14),
    cls: dv.getUint8(o + 15),
    angle: dv.getUint8(o + 16),
    user: dv.getUint8(o + 17),
    source: dv.getUint16(o + 18, true),
  };
}

// GPSTIME11 version 2 (field_gpstime10.cpp): the time as the 64-bit integer of its double's bits
const GPS_MULTI = 500;
const GPS_MULTI_MINUS = -10;
const GPS_MULTI_UNCHANGED = GPS_MULTI - GPS_MULTI_MINUS + 1;
const GPS_MULTI_CODE_FULL = GPS_MULTI - GPS_MULTI_MINUS + 2;
const GPS_MULTI_TOTAL = GPS_MULTI - GPS_MULTI_MINUS + 6;

class GpsTimeCompressor {
  private readonly mMulti = new SymbolModel(GPS_MULTI_TOTAL);
  private readonly m0diff = new SymbolModel(6);
  private readonly ic = new IntegerModels(32, 9);
  private last = 0;
  private next = 0;
  private readonly lastGps: bigint[];
  private readonly lastDiff = [0, 0, 0, 0];
  private readonly extreme = [0, 0, 0, 0];
  constructor(first: bigint) {
    this.lastGps = [first, 0n, 0n, 0n];
  }
  /** The difference when it fits 32 bits, else null. */
  private diff32(v: bigint, i: number): number | null {
    const d = BigInt.asIntN(64, v - this.lastGps[i]);
    return d === BigInt.asIntN(32, d) ? Number(d) : null;
  }
  private startSequence(enc: ArithmeticEncoder, v: bigint) {
    enc.compressInt(this.ic, Number(BigInt.asIntN(32, this.lastGps[this.last] >> 32n)), Number(BigInt.asIntN(32, v >> 32n)), 8);
    const low = Number(BigInt.asUintN(32, v));
    enc.writeBits(16, low & 0xffff);
    enc.writeBits(16, low >>> 16);
    this.next = (this.next + 1) & 3;
    this.last = this.next;
    this.lastDiff[this.last] = 0;
    this.extreme[this.last] = 0;
  }
  private extremeSeen(curr: number) {
    if (++this.extreme[this.last] > 3) {
      this.lastDiff[this.last] = curr;
      this.extreme[this.last] = 0;
    }
  }
  compress(enc: ArithmeticEncoder, v: bigint): void {
    const last = this.last;
    if (this.lastDiff[last] === 0) {
      if (v === this.lastGps[last]) return enc.encodeSymbol(this.m0diff, 0);
      const curr = this.diff32(v, last);
      if (curr != null) {
        enc.encodeSymbol(this.m0diff, 1);
        enc.compressInt(this.ic, 0, curr, 0);
        this.lastDiff[last] = curr;
        this.extreme[last] = 0;
      } else {
        for (let i = 1; i < 4; i++) {
          if (this.diff32(v, (last + i) & 3) != null) {
            enc.encodeSymbol(this.m0diff, i + 2);
            this.last = (last + i) & 3;
            return this.compress(enc, v);
          }
        }
        enc.encodeSymbol(this.m0diff, 2);
        this.startSequence(enc, v);
      }
      this.lastGps[this.last] = v;
      return;
    }
    if (v === this.lastGps[last]) return enc.encodeSymbol(this.mMulti, GPS_MULTI_UNCHANGED);
    const curr = this.diff32(v, last);
    if (curr != null) {
      const f = Math.fround(Math.fround(curr) / Math.fround(this.lastDiff[last]));
      const multi = Math.sign(f) * Math.round(Math.abs(f)); // std::round: halves away from zero
      const ld = this.lastDiff[last];
      if (multi === 1) {
        enc.encodeSymbol(this.mMulti, 1);
        enc.compressInt(this.ic, ld, curr, 1);
        this.extreme[last] = 0;
      } else if (multi > 0) {
        if (multi < GPS_MULTI) {
          enc.encodeSymbol(this.mMulti, multi);
          enc.compressInt(this.ic, Math.imul(multi, ld), curr, multi < 10 ? 2 : 3);
        } else {
          enc.encodeSymbol(this.mMulti, GPS_MULTI);
          enc.compressInt(this.ic, Math.imul(GPS_MULTI, ld), curr, 4);
          this.extremeSeen(curr);
        }
      } else if (multi < 0) {
        if (multi > GPS_MULTI_MINUS) {
          enc.encodeSymbol(this.mMulti, GPS_MULTI - multi);
          enc.compressInt(this.ic, Math.imul(multi, ld), curr, 5);
        } else {
          enc.encodeSymbol(this.mMulti, GPS_MULTI - GPS_MULTI_MINUS);
          enc.compressInt(this.ic, Math.imul(GPS_MULTI_MINUS, ld), curr, 6);
          this.extremeSeen(curr);
        }
      } else {
        enc.encodeSymbol(this.mMulti, 0);
        enc.compressInt(this.ic, 0, curr, 7);
        this.extremeSeen(curr);
      }
    } else {
      for (let i = 1; i < 4; i++) {
        if (this.diff32(v, (last + i) & 3) != null) {
          enc.encodeSymbol(this.mMulti, GPS_MULTI_CODE_FULL + i);
          this.last = (last + i) & 3;
          return this.compress(enc, v);
        }
      }
      enc.encodeSymbol(this.mMulti, GPS_MULTI_CODE_FULL);
      this.startSequence(enc, v);
    }
    this.lastGps[this.last] = v;
  }
}

/** Compresses one chunk of POINT10 records (20 bytes each) as LASzip does. */
export function compressPoint10Chunk(records: Uint8Array, count: number): Uint8Array {
  return compressChunk(records, count, 0);
}

/**
 * Compresses one chunk of point records as LASzip does: format 0 (POINT10, 20 bytes) or
 * format 1 (POINT10 then GPSTIME11, 28 bytes).
 */
export function compressChunk(records: Uint8Array, count: number, format: 0 | 1): Uint8Array {
  const len = format === 1 ? 28 : 20;
  const out = new ByteSink();
  const enc = new ArithmeticEncoder(out);
  const dv = new DataView(records.buffer, records.byteOffset, records.byteLength);
  // the first point goes out raw, ahead of the arithmetic-coded stream
  for (let i = 0; i < len; i++) out.push(records[i]);
  const gps = format === 1 ? new GpsTimeCompressor(dv.getBigInt64(20, true)) : null;
  let last = unpack(dv, 0);
  const lastIntensity = new Array<number>(16).fill(0);
  const medX = Array.from({ length: 16 }, () => new Median5());
  const medY = Array.from({ length: 16 }, () => new Median5());
  const lastHeight = new Array<number>(8).fill(0);
  const mChanged = new SymbolModel(64);
  const mAngle = [new SymbolModel(256), new SymbolModel(256)];
  const mBitByte = new Map<number, SymbolModel>();
  const mClass = new Map<number, SymbolModel>();
  const mUser = new Map<number, SymbolModel>();
  const model = (m: Map<number, SymbolModel>, k: number) => m.get(k) ?? (m.set(k, new SymbolModel(256)), m.get(k)!);
  const icIntensity = new IntegerModels(16, 4);
  const icSource = new IntegerModels(16, 1);
  const icDx = new IntegerModels(32, 2);
  const icDy = new IntegerModels(32, 22);
  const icZ = new IntegerModels(32, 20);
  const clearBit0 = (k: number) => k & ~1;
  for (let i = 1; i < count; i++) {
    const p = unpack(dv, len * i);
    const r = p.bits & 7;
    const n = (p.bits >> 3) & 7;
    const m = NUMBER_RETURN_MAP[n][r];
    const l = NUMBER_RETURN_LEVEL[n][r];
    const changed =
      ((p.bits ^ last.bits) !== 0 ? 32 : 0) |
      ((lastIntensity[m] ^ p.intensity) !== 0 ? 16 : 0) |
      (p.cls !== last.cls ? 8 : 0) |
      (p.angle !== last.angle ? 4 : 0) |
      (p.user !== last.user ? 2 : 0) |
      (p.source !== last.source ? 1 : 0);
    enc.encodeSymbol(mChanged, changed);
    if (changed & 32) enc.encodeSymbol(model(mBitByte, last.bits), p.bits);
    if (changed & 16) {
      enc.compressInt(icIntensity, lastIntensity[m], p.intensity, m < 3 ? m : 3);
      lastIntensity[m] = p.intensity;
    }
    if (changed & 8) enc.encodeSymbol(model(mClass, last.cls), p.cls);
    if (changed & 4) enc.encodeSymbol(mAngle[(p.bits >> 6) & 1], (p.angle - last.angle) & 0xff);
    if (changed & 2) enc.encodeSymbol(model(mUser, last.user), p.user);
    if (changed & 1) enc.compressInt(icSource, last.source, p.source, 0);
    // x, y, z: differences predicted by the median of the last five, contexts from the k's
    let diff = (p.x - last.x) | 0;
    enc.compressInt(icDx, medX[m].get(), diff, n === 1 ? 1 : 0);
    medX[m].add(diff);
    let kBits = icDx.k;
    diff = (p.y - last.y) | 0;
    enc.compressInt(icDy, medY[m].get(), diff, (n === 1 ? 1 : 0) + (kBits < 20 ? clearBit0(kBits) : 20));
    medY[m].add(diff);
    kBits = (icDx.k + icDy.k) >>> 1;
    enc.compressInt(icZ, lastHeight[l], p.z, (n === 1 ? 1 : 0) + (kBits < 18 ? clearBit0(kBits) : 18));
    lastHeight[l] = p.z;
    last = p;
    if (gps) gps.compress(enc, dv.getBigInt64(len * i + 20, true));
  }
  enc.done();
  return out.bytes();
}

/** The chunk table: version 0, the chunk count, then each chunk's byte size integer-coded. */
export function chunkTable(chunkBytes: number[]): Uint8Array {
  const out = new ByteSink();
  [0, chunkBytes.length].forEach((v) => [0, 8, 16, 24].forEach((s) => out.push((v >>> s) & 0xff)));
  const enc = new ArithmeticEncoder(out);
  const ic = new IntegerModels(32, 2);
  let pred = 0;
  for (const b of chunkBytes) {
    enc.compressInt(ic, pred, b, 1);
    pred = b;
  }
  enc.done();
  return out.bytes();
}

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
  const fd = openSync(path, "w");
  try {
    const head = lazHeader(0, bounds, o);
    writeSync(fd, head);
    writeSync(fd, new Uint8Array(8)); // the chunk table offset, filled in at the end
    let pos = head.length + 8;
    const sizes: number[] = [];
    let total = 0;
    let pending = new Float64Array(0);
    const flush = (xyz: Float64Array, n: number) => {
      const chunk = compressChunk(point10Records(xyz, n, o), n, o.pointFormat ?? 0);
      writeSync(fd, chunk, 0, chunk.length, pos);
      pos += chunk.length;
      sizes.push(chunk.length);
      total += n;
    };
    for (let block = next(pos); block; block = next(pos)) {
      const all = new Float64Array(pending.length + block.length);
      all.set(pending);
      all.set(block, pending.length);
      let at = 0;
      while (all.length - at >= 3 * chunkSize) {
        flush(all.subarray(at, at + 3 * chunkSize), chunkSize);
        at += 3 * chunkSize;
      }
      pending = all.slice(at);
    }
    if (pending.length) flush(pending, pending.length / 3);
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
