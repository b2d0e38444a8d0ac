// A LASzip chunk decoder in TypeScript for the two items every LAS 1.2 scan of formats 0 and 1
// carries (issue 18): POINT10 version 2 and GPSTIME11 version 2. Why not laz-perf for these:
// its wasm build decodes ~2.7 M points per CPU-second here (one call per point, ~90 % of the
// extraction's time), while this port, which keeps only X, Y, Z and the state the next point
// is predicted from, decodes several times faster. Ported decoder side from the open LASzip
// sources (M. Isenburg, rapidlasso; Apache-2.0, as laz-perf carries them:
// cpp/lazperf/decoder.hpp, decompressor.hpp, detail/field_point10.cpp, field_gpstime10.cpp,
// utils.hpp streaming_median). Other formats and item versions stay with laz-perf
// (app/scan/laz-chunks.ts). Every point is checked against laz-perf in
// tests/integration/laz-point10.test.ts, on LASzip's own files and on generated ones.
// No I/O here.
import { LasFormatError } from "./las";
import { AC_MAX_LENGTH, AC_MIN_LENGTH, BitModel, BM_LENGTH_SHIFT, DM_LENGTH_SHIFT, DM_MAX_COUNT, IntegerModels, type LaszipVlr } from "./laszip";

/** LASzip item types (laszip.hpp): 6 POINT10, 7 GPSTIME11. */
const POINT10 = 6;
const GPSTIME11 = 7;

/** True when this decoder reads the file's items: POINT10 v2 alone or with GPSTIME11 v2. */
export function point10Decodable(vlr: LaszipVlr, pointFormat: number, recordLength: number): boolean {
  const it = vlr.items;
  if (vlr.compressor !== 2) return false;
  if (pointFormat === 0 && recordLength === 20) return it.length === 1 && it[0].type === POINT10 && it[0].size === 20 && it[0].version === 2;
  if (pointFormat === 1 && recordLength === 28) {
    return it.length === 2 && it[0].type === POINT10 && it[0].size === 20 && it[0].version === 2 && it[1].type === GPSTIME11 && it[1].size === 8 && it[1].version === 2;
  }
  return false;
}

// LASzip's context maps from (number of returns n, return number r), field_point10.cpp
const NUMBER_RETURN_MAP = Int8Array.from([
  15, 14, 13, 12, 11, 10, 9, 8, 14, 0, 1, 3, 6, 10, 10, 9, 13, 1, 2, 4, 7, 11, 11, 10, 12, 3, 4, 5, 8, 12, 12, 11, 11, 6, 7, 8, 9, 13, 13, 12, 10, 10, 11, 12, 13, 14, 14, 13, 9,
  10, 11, 12, 13, 14, 15, 14, 8, 9, 10, 11, 12, 13, 14, 15,
]);
const NUMBER_RETURN_LEVEL = Int8Array.from({ length: 64 }, (_, i) => Math.abs((i >> 3) - (i & 7)));

/** LASzip's running median of the last five values (utils.hpp streaming_median). */
class Median5 {
  v0 = 0;
  v1 = 0;
  v2 = 0;
  v3 = 0;
  v4 = 0;
  high = true;
  add(x: number) {
    if (this.high) {
      if (x < this.v2) {
        this.v4 = this.v3;
        this.v3 = this.v2;
        if (x < this.v0) {
          this.v2 = this.v1;
          this.v1 = this.v0;
          this.v0 = x;
        } else if (x < this.v1) {
          this.v2 = this.v1;
          this.v1 = x;
        } else this.v2 = x;
      } else {
        if (x < this.v3) {
          this.v4 = this.v3;
          this.v3 = x;
        } else this.v4 = x;
        this.high = false;
      }
    } else {
      if (this.v2 < x) {
        this.v0 = this.v1;
        this.v1 = this.v2;
        if (this.v4 < x) {
          this.v2 = this.v3;
          this.v3 = this.v4;
          this.v4 = x;
        } else if (this.v3 < x) {
          this.v2 = this.v3;
          this.v3 = x;
        } else this.v2 = x;
      } else {
        if (this.v1 < x) {
          this.v0 = this.v1;
          this.v1 = x;
        } else this.v0 = x;
        this.high = true;
      }
    }
  }
}

/**
 * LASzip's adaptive symbol model on the decoder side, with its decoder table: for more than
 * 16 symbols a table maps the top bits of value/length to the few symbols it can be, so a
 * symbol costs a lookup and a short search instead of a bisection over all symbols
 * (arithmeticmodel.cpp). It codes exactly as SymbolModel of laszip.ts (the table only speeds
 * the search), which the chunk table and the test writer use.
 */
class Model {
  readonly symbols: number;
  readonly lastSymbol: number;
  readonly distribution: Uint32Array;
  readonly symbolCount: Uint32Array;
  readonly table: Uint32Array | null;
  readonly tableShift: number;
  totalCount = 0;
  updateCycle: number;
  symbolsUntilUpdate = 0;
  constructor(symbols: number) {
    this.symbols = symbols;
    this.lastSymbol = symbols - 1;
    this.distribution = new Uint32Array(symbols);
    this.symbolCount = new Uint32Array(symbols).fill(1);
    let tableBits = 3;
    while (symbols > 1 << (tableBits + 2)) ++tableBits;
    this.table = symbols > 16 ? new Uint32Array((1 << tableBits) + 2) : null;
    this.tableShift = DM_LENGTH_SHIFT - tableBits;
    this.updateCycle = symbols;
    this.update();
    this.symbolsUntilUpdate = this.updateCycle = (symbols + 6) >>> 1;
  }
  update() {
    const count = this.symbolCount;
    const dist = this.distribution;
    const symbols = this.symbols;
    if ((this.totalCount += this.updateCycle) > DM_MAX_COUNT) {
      let total = 0;
      for (let n = 0; n < symbols; n++) total += count[n] = (count[n] + 1) >>> 1;
      this.totalCount = total;
    }
    let sum = 0;
    const scale = Math.floor(0x80000000 / this.totalCount);
    const table = this.table;
    if (!table) {
      for (let k = 0; k < symbols; k++) {
        dist[k] = Math.imul(scale, sum) >>> (31 - DM_LENGTH_SHIFT);
        sum += count[k];
      }
    } else {
      const shift = this.tableShift;
      let s = 0;
      for (let k = 0; k < symbols; k++) {
        dist[k] = Math.imul(scale, sum) >>> (31 - DM_LENGTH_SHIFT);
        sum += count[k];
        const w = dist[k] >>> shift;
        while (s < w) table[++s] = k - 1;
      }
      table[0] = 0;
      const size = table.length - 2;
      while (s <= size) table[++s] = symbols - 1;
    }
    this.updateCycle = (5 * this.updateCycle) >>> 2;
    const maxCycle = (symbols + 6) << 3;
    if (this.updateCycle > maxCycle) this.updateCycle = maxCycle;
    this.symbolsUntilUpdate = this.updateCycle;
  }
}

/** The integer compressor's models (compressor.hpp), over Model. */
class IntModels {
  readonly corrRange: number;
  readonly corrMin: number;
  readonly mBits: Model[] = [];
  readonly mCorrector0 = new BitModel();
  readonly mCorrector: Model[] = [];
  k = 0;
  constructor(bits: number, contexts: number) {
    const ref = new IntegerModels(bits, 1);
    this.corrRange = ref.corrRange;
    this.corrMin = ref.corrMin;
    for (let i = 0; i < contexts; i++) this.mBits.push(new Model(ref.corrBits + 1));
    for (let i = 1; i <= ref.corrBits; i++) this.mCorrector.push(new Model(i <= 8 ? 1 << i : 1 << 8));
  }
}

// 2^(k−1) and 2^k − 1 for the correctors' k (2 ** k costs a call in the hot loop)
const HALF = Float64Array.from({ length: 33 }, (_, k) => (k ? 2 ** (k - 1) : 0));
const FULL = Float64Array.from({ length: 33 }, (_, k) => 2 ** k - 1);

/**
 * The arithmetic decoder and integer decompressor of laszip.ts with the byte reads inlined:
 * reads past the chunk's end give zeros (the caller checks the position at the end).
 */
class FastDecoder {
  /**
   * value, length: the coder's two unsigned 32-bit registers, in a typed array so V8 keeps them
   * as machine words (as object fields above 2³⁰ they become boxed doubles).
   */
  readonly st = new Uint32Array(2);
  constructor(
    readonly b: Uint8Array,
    public pos: number,
  ) {
    this.st[0] = (b[pos] << 24) | (b[pos + 1] << 16) | (b[pos + 2] << 8) | b[pos + 3];
    this.st[1] = AC_MAX_LENGTH;
    this.pos = pos + 4;
  }
  renorm() {
    const b = this.b;
    const st = this.st;
    let v = st[0];
    let l = st[1];
    let pos = this.pos;
    do {
      v = (v << 8) | b[pos++];
      l = l << 8;
    } while (l >>> 0 < AC_MIN_LENGTH);
    this.pos = pos;
    st[0] = v;
    st[1] = l;
  }
  bit(m: BitModel): number {
    const st = this.st;
    const x = Math.imul(m.bit0Prob, st[1] >>> BM_LENGTH_SHIFT) >>> 0;
    let sym: number;
    if (st[0] < x) {
      sym = 0;
      st[1] = x;
      ++m.bit0Count;
    } else {
      sym = 1;
      st[0] = st[0] - x;
      st[1] = st[1] - x;
    }
    if (st[1] < AC_MIN_LENGTH) this.renorm();
    if (--m.bitsUntilUpdate === 0) m.update();
    return sym;
  }
  symbol(m: Model): number {
    const st = this.st;
    const dist = m.distribution;
    const value = st[0];
    let sym: number;
    let x: number;
    let y = st[1];
    const len = y >>> DM_LENGTH_SHIFT;
    const table = m.table;
    if (table) {
      const dv = (value / len) >>> 0;
      const t = dv >>> m.tableShift;
      sym = table[t];
      let n = table[t + 1] + 1;
      while (n > sym + 1) {
        const k = (sym + n) >>> 1;
        if (dist[k] > dv) n = k;
        else sym = k;
      }
      x = Math.imul(dist[sym], len) >>> 0;
      if (sym !== m.lastSymbol) y = Math.imul(dist[sym + 1], len) >>> 0;
    } else {
      let n = m.symbols;
      sym = 0;
      x = 0;
      let k = n >>> 1;
      do {
        const z = Math.imul(len, dist[k]) >>> 0;
        if (z > value) {
          n = k;
          y = z;
        } else {
          sym = k;
          x = z;
        }
      } while ((k = (sym + n) >>> 1) !== sym);
    }
    st[0] = value - x;
    const l = (st[1] = y - x);
    if (l < AC_MIN_LENGTH) this.renorm();
    ++m.symbolCount[sym];
    if (--m.symbolsUntilUpdate === 0) m.update();
    return sym;
  }
  bits(n: number): number {
    if (n > 19) {
      const lo = this.bits(16);
      const hi = this.bits(n - 16);
      return ((hi << 16) | lo) >>> 0;
    }
    const st = this.st;
    const len = st[1] >>> n;
    const value = st[0];
    const sym = (value / len) >>> 0;
    st[0] = value - Math.imul(len, sym);
    st[1] = len;
    if (len < AC_MIN_LENGTH) this.renorm();
    return sym;
  }
  /** compressor.hpp decompress: pred + corrector, wrapped to the compressor's range. */
  int(ic: IntModels, pred: number, context: number): number {
    const k = (ic.k = this.symbol(ic.mBits[context]));
    let c: number;
    if (k === 0) c = this.bit(ic.mCorrector0);
    else if (k < 32) {
      c = this.symbol(ic.mCorrector[k - 1]);
      // (c << k1) stays under 2³¹: c < 2⁸ and k1 ≤ 23
      if (k > 8) c = (c << (k - 8)) | this.bits(k - 8);
      if (c >= HALF[k]) c += 1;
      else c -= FULL[k];
    } else c = ic.corrMin;
    let real = pred + c;
    if (ic.corrRange === 0) return real | 0;
    if (real < 0) real += ic.corrRange;
    else if (real >= ic.corrRange) real -= ic.corrRange;
    return real;
  }
}

// GPSTIME11 version 2 (field_gpstime10.cpp)
const GPS_MULTI = 500;
const GPS_MULTI_MINUS = -10;
const GPS_MULTI_UNCHANGED = GPS_MULTI - GPS_MULTI_MINUS + 1;
const GPS_MULTI_CODE_FULL = GPS_MULTI - GPS_MULTI_MINUS + 2;
const GPS_MULTI_TOTAL = GPS_MULTI - GPS_MULTI_MINUS + 6;
const TWO32 = 2 ** 32;

/**
 * The GPS time's decoder state. The times themselves are not needed, only kept in step: each
 * as its 64-bit integer in two halves (high signed, low unsigned), for the "full" restarts
 * that predict from the high half.
 */
class GpsTimeDecoder {
  readonly mMulti = new Model(GPS_MULTI_TOTAL);
  readonly m0diff = new Model(6);
  readonly ic = new IntModels(32, 9);
  last = 0;
  next = 0;
  readonly hi = new Int32Array(4);
  readonly lo = new Float64Array(4);
  readonly lastDiff = new Int32Array(4);
  readonly extreme = new Int32Array(4);
  constructor(b: Uint8Array, at: number) {
    this.lo[0] = (b[at] | (b[at + 1] << 8) | (b[at + 2] << 16) | (b[at + 3] << 24)) >>> 0;
    this.hi[0] = b[at + 4] | (b[at + 5] << 8) | (b[at + 6] << 16) | (b[at + 7] << 24);
  }
  private add(i: number, d: number) {
    let lo = this.lo[i] + d;
    if (lo >= TWO32) {
      lo -= TWO32;
      this.hi[i]++;
    } else if (lo < 0) {
      lo += TWO32;
      this.hi[i]--;
    }
    this.lo[i] = lo;
  }
  private full(dec: FastDecoder) {
    this.next = (this.next + 1) & 3;
    this.hi[this.next] = dec.int(this.ic, this.hi[this.last], 8);
    const low = dec.bits(16);
    this.lo[this.next] = (((dec.bits(16) << 16) | low) >>> 0);
    this.last = this.next;
    this.lastDiff[this.last] = 0;
    this.extreme[this.last] = 0;
  }
  private extremeSeen(d: number) {
    if (++this.extreme[this.last] > 3) {
      this.lastDiff[this.last] = d;
      this.extreme[this.last] = 0;
    }
  }
  read(dec: FastDecoder): void {
    for (;;) {
      const last = this.last;
      if (this.lastDiff[last] === 0) {
        const multi = dec.symbol(this.m0diff);
        if (multi === 1) {
          const d = dec.int(this.ic, 0, 0);
          this.lastDiff[last] = d;
          this.add(last, d);
          this.extreme[last] = 0;
        } else if (multi === 2) this.full(dec);
        else if (multi > 2) {
          this.last = (last + multi - 2) & 3;
          continue;
        }
        return;
      }
      const multi = dec.symbol(this.mMulti);
      const ld = this.lastDiff[last];
      if (multi === 1) {
        this.add(last, dec.int(this.ic, ld, 1));
        this.extreme[last] = 0;
      } else if (multi < GPS_MULTI_UNCHANGED) {
        let d: number;
        if (multi === 0) {
          d = dec.int(this.ic, 0, 7);
          this.extremeSeen(d);
        } else if (multi < GPS_MULTI) d = dec.int(this.ic, Math.imul(multi, ld), multi < 10 ? 2 : 3);
        else if (multi === GPS_MULTI) {
          d = dec.int(this.ic, Math.imul(GPS_MULTI, ld), 4);
          this.extremeSeen(d);
        } else {
          const mm = GPS_MULTI - multi;
          if (mm > GPS_MULTI_MINUS) d = dec.int(this.ic, Math.imul(mm, ld), 5);
          else {
            d = dec.int(this.ic, Math.imul(GPS_MULTI_MINUS, ld), 6);
            this.extremeSeen(d);
          }
        }
        this.add(last, d);
      } else if (multi === GPS_MULTI_CODE_FULL) this.full(dec);
      else if (multi > GPS_MULTI_CODE_FULL) {
        this.last = (last + multi - GPS_MULTI_CODE_FULL) & 3;
        continue;
      }
      return;
    }
  }
}

/**
 * One chunk's POINT10 state. The per-point work is a method of its own so that V8 optimizes
 * it as a function (called for every point) rather than through on-stack replacement of a
 * long loop, which it redid at the start of every chunk.
 */
class Point10Decoder {
  x: number;
  y: number;
  z: number;
  bits: number;
  cls: number;
  angle: number;
  user: number;
  source: number;
  readonly dec: FastDecoder;
  readonly gps: GpsTimeDecoder | null;
  // field_point10.cpp starts every context's intensity at 0, not at the first point's
  readonly lastIntensity = new Int32Array(16);
  readonly medX = Array.from({ length: 16 }, () => new Median5());
  readonly medY = Array.from({ length: 16 }, () => new Median5());
  readonly lastHeight = new Int32Array(8);
  readonly mChanged = new Model(64);
  readonly mAngle = [new Model(256), new Model(256)];
  readonly mBitByte: (Model | undefined)[] = new Array(256);
  readonly mClass: (Model | undefined)[] = new Array(256);
  readonly mUser: (Model | undefined)[] = new Array(256);
  readonly icIntensity = new IntModels(16, 4);
  readonly icSource = new IntModels(16, 1);
  readonly icDx = new IntModels(32, 2);
  readonly icDy = new IntModels(32, 22);
  readonly icZ = new IntModels(32, 20);
  /** Reads the chunk's first point (stored raw) and starts the arithmetic decoder after it. */
  constructor(b: Uint8Array, at: number, withGps: boolean) {
    const i32 = (o: number) => b[o] | (b[o + 1] << 8) | (b[o + 2] << 16) | (b[o + 3] << 24);
    this.x = i32(at);
    this.y = i32(at + 4);
    this.z = i32(at + 8);
    this.bits = b[at + 14];
    this.cls = b[at + 15];
    this.angle = b[at + 16];
    this.user = b[at + 17];
    this.source = b[at + 18] | (b[at + 19] << 8);
    this.gps = withGps ? new GpsTimeDecoder(b, at + 20) : null;
    this.dec = new FastDecoder(b, at + (withGps ? 28 : 20));
  }
  next(): void {
    const dec = this.dec;
    const changed = dec.symbol(this.mChanged);
    if (changed !== 0) {
      if (changed & 32) this.bits = dec.symbol((this.mBitByte[this.bits] ??= new Model(256)));
      if (changed & 16) {
        const m = NUMBER_RETURN_MAP[this.bits & 63];
        this.lastIntensity[m] = dec.int(this.icIntensity, this.lastIntensity[m], m < 3 ? m : 3);
      }
      if (changed & 8) this.cls = dec.symbol((this.mClass[this.cls] ??= new Model(256)));
      if (changed & 4) this.angle = (this.angle + dec.symbol(this.mAngle[(this.bits >> 6) & 1])) & 0xff;
      if (changed & 2) this.user = dec.symbol((this.mUser[this.user] ??= new Model(256)));
      if (changed & 1) this.source = dec.int(this.icSource, this.source, 0);
    }
    const nr = this.bits & 63;
    const m = NUMBER_RETURN_MAP[nr];
    const one = (nr & 56) === 8 ? 1 : 0;
    const mx = this.medX[m];
    const dx = dec.int(this.icDx, mx.v2, one);
    mx.add(dx);
    this.x = (this.x + dx) | 0;
    const kx = this.icDx.k;
    const my = this.medY[m];
    const dy = dec.int(this.icDy, my.v2, one + (kx < 20 ? kx & ~1 : 20));
    my.add(dy);
    this.y = (this.y + dy) | 0;
    const kz = (kx + this.icDy.k) >>> 1;
    const l = NUMBER_RETURN_LEVEL[nr];
    this.z = this.lastHeight[l] = dec.int(this.icZ, this.lastHeight[l], one + (kz < 18 ? kz & ~1 : 18));
    if (this.gps) this.gps.read(dec);
  }
}

/**
 * Decodes one chunk (`bytes[at, end)`, `points` points) of POINT10 v2 (+ GPSTIME11 v2) records
 * into integer X, Y, Z triples in `xyz` (3 per point). `ci` numbers the chunk for errors.
 */
export function decodePoint10Chunk(bytes: Uint8Array, at: number, end: number, points: number, withGps: boolean, xyz: Int32Array, ci: number): void {
  if (points === 0) return;
  if (end - at < (withGps ? 28 : 20)) throw new LasFormatError(`LAZ chunk ${ci + 1} is cut short`);
  const p = new Point10Decoder(bytes, at, withGps);
  xyz[0] = p.x;
  xyz[1] = p.y;
  xyz[2] = p.z;
  for (let i = 1, o = 3; i < points; i++, o += 3) {
    p.next();
    xyz[o] = p.x;
    xyz[o + 1] = p.y;
    xyz[o + 2] = p.z;
  }
  // a stream that ran past its chunk read zeros or the next chunk: the points are not the file's
  if (points > 1 && p.dec.pos > end + 4) throw new LasFormatError(`LAZ chunk ${ci + 1} cannot be decoded: its data ends before its ${points} points`);
}
