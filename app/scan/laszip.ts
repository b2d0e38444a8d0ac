// What a reader needs to stream a LAZ file chunk by chunk: the LASzip VLR (user id
// "laszip encoded", record 22204) and the chunk table. LASzip's chunked compression (LASzip
// 2.x and later, "compressor" 2 and 3) writes an int64 at the start of the point data giving
// where the chunk table is; the table is a version, a chunk count and then each chunk's byte
// size (and point count when chunks vary in size), itself entropy-coded with the same adaptive
// arithmetic coder and integer compressor as the points. Those are ported here, decoder side
// only, from the open LASzip sources (M. Isenburg, rapidlasso; Apache-2.0 in laz-perf:
// cpp/lazperf/decoder.hpp, decompressor.hpp, model.hpp, readers.cpp parseChunkTable). The
// points themselves are decoded by laz-perf's ChunkDecoder, one chunk at a time. No I/O here.
import { LasFormatError, type LasHeader } from "./las";

// Constants of the arithmetic coder (LASzip arithmeticmodel.hpp / laz-perf coderbase.hpp).
export const AC_MIN_LENGTH = 0x01000000;
export const AC_MAX_LENGTH = 0xffffffff;
export const BM_LENGTH_SHIFT = 13;
export const BM_MAX_COUNT = 1 << BM_LENGTH_SHIFT;
export const DM_LENGTH_SHIFT = 15;
export const DM_MAX_COUNT = 1 << DM_LENGTH_SHIFT;

/** Adaptive multi-symbol model (the encoder and decoder keep identical copies). */
export class SymbolModel {
  readonly symbols: number;
  readonly lastSymbol: number;
  readonly distribution: Uint32Array;
  readonly symbolCount: Uint32Array;
  totalCount = 0;
  updateCycle: number;
  symbolsUntilUpdate: number;
  constructor(symbols: number) {
    if (symbols < 2 || symbols > 1 << 11) throw new Error("invalid number of symbols");
    this.symbols = symbols;
    this.lastSymbol = symbols - 1;
    this.distribution = new Uint32Array(symbols);
    this.symbolCount = new Uint32Array(symbols).fill(1);
    this.updateCycle = symbols;
    this.symbolsUntilUpdate = 0;
    this.update();
    this.symbolsUntilUpdate = this.updateCycle = (symbols + 6) >>> 1;
  }
  update() {
    if ((this.totalCount += this.updateCycle) > DM_MAX_COUNT) {
      this.totalCount = 0;
      for (let n = 0; n < this.symbols; n++) this.totalCount += this.symbolCount[n] = (this.symbolCount[n] + 1) >>> 1;
    }
    let sum = 0;
    const scale = Math.floor(0x80000000 / this.totalCount);
    for (let k = 0; k < this.symbols; k++) {
      // (scale · sum) in 32-bit unsigned arithmetic, then shifted, as in C
      this.distribution[k] = Math.imul(scale, sum) >>> (31 - DM_LENGTH_SHIFT);
      sum += this.symbolCount[k];
    }
    this.updateCycle = (5 * this.updateCycle) >>> 2;
    const maxCycle = (this.symbols + 6) << 3;
    if (this.updateCycle > maxCycle) this.updateCycle = maxCycle;
    this.symbolsUntilUpdate = this.updateCycle;
  }
}

/** Adaptive binary model. */
export class BitModel {
  updateCycle = 4;
  bitsUntilUpdate = 4;
  bit0Prob = 1 << (BM_LENGTH_SHIFT - 1);
  bit0Count = 1;
  bitCount = 2;
  update() {
    if ((this.bitCount += this.updateCycle) > BM_MAX_COUNT) {
      this.bitCount = (this.bitCount + 1) >>> 1;
      this.bit0Count = (this.bit0Count + 1) >>> 1;
      if (this.bit0Count === this.bitCount) ++this.bitCount;
    }
    const scale = Math.floor(0x80000000 / this.bitCount);
    this.bit0Prob = Math.imul(this.bit0Count, scale) >>> (31 - BM_LENGTH_SHIFT);
    this.updateCycle = (5 * this.updateCycle) >>> 2;
    if (this.updateCycle > 64) this.updateCycle = 64;
    this.bitsUntilUpdate = this.updateCycle;
  }
}

/** The integer compressor's parameters and models (corrector bits, contexts). */
export class IntegerModels {
  readonly corrBits: number;
  readonly corrRange: number;
  readonly corrMin: number;
  readonly corrMax: number;
  readonly bitsHigh = 8;
  readonly mBits: SymbolModel[] = [];
  readonly mCorrector0 = new BitModel();
  readonly mCorrector: SymbolModel[] = [];
  /** The k of the last corrector coded (other coordinates pick their context from it). */
  k = 0;
  constructor(bits = 16, contexts = 1) {
    if (bits && bits < 32) {
      this.corrBits = bits;
      this.corrRange = 2 ** bits;
      this.corrMin = -(this.corrRange / 2);
      this.corrMax = this.corrMin + this.corrRange - 1;
    } else {
      this.corrBits = 32;
      this.corrRange = 0;
      this.corrMin = -0x80000000;
      this.corrMax = 0x7fffffff;
    }
    for (let i = 0; i < contexts; i++) this.mBits.push(new SymbolModel(this.corrBits + 1));
    for (let i = 1; i <= this.corrBits; i++) this.mCorrector.push(new SymbolModel(i <= this.bitsHigh ? 1 << i : 1 << this.bitsHigh));
  }
}

/** The arithmetic decoder over a byte array (LASzip arithmeticdecoder.cpp). */
export class ArithmeticDecoder {
  private value = 0;
  private length = AC_MAX_LENGTH;
  constructor(
    private readonly bytes: Uint8Array,
    public pos: number,
  ) {}
  private byte(): number {
    if (this.pos >= this.bytes.length) throw new LasFormatError("the LAZ chunk table is cut short");
    return this.bytes[this.pos++];
  }
  init() {
    this.value = ((this.byte() << 24) | (this.byte() << 16) | (this.byte() << 8) | this.byte()) >>> 0;
    this.length = AC_MAX_LENGTH;
  }
  private renorm() {
    do {
      this.value = ((this.value << 8) | this.byte()) >>> 0;
      this.length = (this.length << 8) >>> 0;
    } while (this.length < AC_MIN_LENGTH);
  }
  decodeBit(m: BitModel): number {
    const x = Math.imul(m.bit0Prob, this.length >>> BM_LENGTH_SHIFT) >>> 0;
    const sym = this.value >= x ? 1 : 0;
    if (sym === 0) {
      this.length = x;
      ++m.bit0Count;
    } else {
      this.value = (this.value - x) >>> 0;
      this.length = (this.length - x) >>> 0;
    }
    if (this.length < AC_MIN_LENGTH) this.renorm();
    if (--m.bitsUntilUpdate === 0) m.update();
    return sym;
  }
  decodeSymbol(m: SymbolModel): number {
    // the decoder without a look-up table: bisection by multiplications
    let n = m.symbols;
    let sym = 0;
    let x = 0;
    let y = this.length;
    this.length = this.length >>> DM_LENGTH_SHIFT;
    let k = n >>> 1;
    do {
      const z = Math.imul(this.length, m.distribution[k]) >>> 0;
      if (z > this.value) {
        n = k;
        y = z;
      } else {
        sym = k;
        x = z;
      }
    } while ((k = (sym + n) >>> 1) !== sym);
    this.value = (this.value - x) >>> 0;
    this.length = (y - x) >>> 0;
    if (this.length < AC_MIN_LENGTH) this.renorm();
    ++m.symbolCount[sym];
    if (--m.symbolsUntilUpdate === 0) m.update();
    return sym;
  }
  readBits(bits: number): number {
    if (bits > 19) {
      const lo = this.readBits(16);
      const hi = this.readBits(bits - 16);
      return ((hi << 16) | lo) >>> 0;
    }
    this.length = this.length >>> bits;
    const sym = Math.floor(this.value / this.length);
    this.value = (this.value - Math.imul(this.length, sym)) >>> 0;
    if (this.length < AC_MIN_LENGTH) this.renorm();
    return sym;
  }
  /** Integer decompression: the real value from its prediction and a coded corrector. */
  decompressInt(ic: IntegerModels, pred: number, context: number): number {
    const k = (ic.k = this.decodeSymbol(ic.mBits[context]));
    let c: number;
    if (k) {
      if (k < 32) {
        if (k <= ic.bitsHigh) c = this.decodeSymbol(ic.mCorrector[k - 1]);
        else {
          const k1 = k - ic.bitsHigh;
          c = this.decodeSymbol(ic.mCorrector[k - 1]);
          c = (c * 2 ** k1 + this.readBits(k1)) | 0;
        }
        if (c >= 2 ** (k - 1)) c += 1;
        else c -= 2 ** k - 1;
      } else c = ic.corrMin;
    } else c = this.decodeBit(ic.mCorrector0);
    let real = pred + c;
    if (ic.corrRange === 0) return real | 0;
    if (real < 0) real += ic.corrRange;
    else if (real >= ic.corrRange) real -= ic.corrRange;
    return real;
  }
}

export type LaszipVlr = {
  /** 1 pointwise (not chunked), 2 pointwise chunked, 3 layered chunked (LAS 1.4 formats 6–10). */
  compressor: number;
  /** Points per chunk; 0xFFFFFFFF when chunks vary in size (the table then gives counts). */
  chunkSize: number;
  items: { type: number; size: number; version: number }[];
};

export const VARIABLE_CHUNK_SIZE = 0xffffffff;

/**
 * Finds and reads the LASzip VLR among the variable-length records that follow the public
 * header (`vlrBytes` = the file from `header.headerSize` to `header.pointsOffset`).
 */
export function findLaszipVlr(vlrBytes: Uint8Array, vlrCount: number): LaszipVlr {
  const dv = new DataView(vlrBytes.buffer, vlrBytes.byteOffset, vlrBytes.byteLength);
  let at = 0;
  for (let i = 0; i < vlrCount && at + 54 <= vlrBytes.length; i++) {
    const userId = new TextDecoder().decode(vlrBytes.subarray(at + 2, at + 18)).replace(/\0.*$/s, "");
    const recordId = dv.getUint16(at + 18, true);
    const len = dv.getUint16(at + 20, true);
    const body = at + 54;
    if (userId === "laszip encoded" && recordId === 22204) {
      if (body + 34 > vlrBytes.length) throw new LasFormatError("the LASzip record is cut short");
      const compressor = dv.getUint16(body, true);
      const chunkSize = dv.getUint32(body + 12, true);
      const n = dv.getUint16(body + 32, true);
      if (body + 34 + 6 * n > vlrBytes.length) throw new LasFormatError("the LASzip record is cut short");
      const items = Array.from({ length: n }, (_, j) => ({
        type: dv.getUint16(body + 34 + 6 * j, true),
        size: dv.getUint16(body + 36 + 6 * j, true),
        version: dv.getUint16(body + 38 + 6 * j, true),
      }));
      return { compressor, chunkSize, items };
    }
    at = body + len;
  }
  throw new LasFormatError('the LAZ file has no LASzip record ("laszip encoded" 22204): it cannot be decoded');
}

export type LazChunk = { offset: number; bytes: number; points: number };

/**
 * Decodes the chunk table (`table` = the bytes from the table's start to the end of the file)
 * into each chunk's file offset, compressed size and point count. The first chunk starts right
 * after the 8-byte table offset at the start of the point data.
 */
export function decodeChunkTable(table: Uint8Array, header: Pick<LasHeader, "pointsOffset" | "pointCount">, vlr: LaszipVlr, fileSize: number): LazChunk[] {
  if (table.length < 8) throw new LasFormatError("the LAZ chunk table is missing");
  const dv = new DataView(table.buffer, table.byteOffset, table.byteLength);
  const version = dv.getUint32(0, true);
  const count = dv.getUint32(4, true);
  if (version !== 0) throw new LasFormatError(`the LAZ chunk table has version ${version}; version 0 is read`);
  if (count === 0) {
    if (header.pointCount !== 0) throw new LasFormatError("the LAZ chunk table lists no chunks for a file with points");
    return [];
  }
  if (count > header.pointCount) throw new LasFormatError(`the LAZ chunk table lists ${count} chunks for ${header.pointCount} points`);
  const dec = new ArithmeticDecoder(table, 8);
  dec.init();
  const ic = new IntegerModels(32, 2);
  const variable = vlr.chunkSize === VARIABLE_CHUNK_SIZE;
  let left = header.pointCount;
  let prevCount = 0;
  let prevBytes = 0;
  let offset = header.pointsOffset + 8;
  const chunks: LazChunk[] = [];
  for (let i = 0; i < count; i++) {
    let points: number;
    if (variable) points = prevCount = dec.decompressInt(ic, prevCount, 0) >>> 0;
    else points = Math.min(vlr.chunkSize, left);
    left -= points;
    const bytes = (prevBytes = dec.decompressInt(ic, prevBytes, 1) >>> 0);
    if (offset + bytes > fileSize) throw new LasFormatError(`LAZ chunk ${i + 1} of ${count} runs past the end of the file`);
    chunks.push({ offset, bytes, points });
    offset += bytes;
  }
  if (left !== 0) throw new LasFormatError(`the LAZ chunk table accounts for ${header.pointCount - left} of the header's ${header.pointCount} points`);
  return chunks;
}
