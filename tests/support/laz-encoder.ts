// The encoder side of LASzip's entropy coding for the test LAZ writer (issue 18): the adaptive
// arithmetic encoder and the integer compressor, ported from the open LASzip sources as
// laz-perf carries them (M. Isenburg, rapidlasso; Apache-2.0): cpp/lazperf/encoder.hpp,
// compressor.hpp. The adaptive models are shared with the app's chunk-table decoder
// (app/scan/laszip.ts). The point items are in laz-items.ts, the files in laz-writer.ts.
import { AC_MAX_LENGTH, AC_MIN_LENGTH, BitModel, BM_LENGTH_SHIFT, DM_LENGTH_SHIFT, IntegerModels, SymbolModel } from "~/scan/laszip";

export class ByteSink {
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
