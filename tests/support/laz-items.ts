// The point items of the test LAZ writer (issue 18): LASzip's POINT10 and GPSTIME11 compressors
// (version 2) and the chunk table, ported from the open LASzip sources as laz-perf carries them
// (M. Isenburg, rapidlasso; Apache-2.0): detail/field_point10.cpp (Point10Compressor),
// detail/field_gpstime10.cpp (Gpstime10Compressor), utils.hpp (streaming_median), lazperf.cpp
// (compress_chunk_table). The coder is in laz-encoder.ts, the files in laz-writer.ts.
import { IntegerModels, SymbolModel } from "~/scan/laszip";
import { ArithmeticEncoder, ByteSink } from "./laz-encoder";

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
