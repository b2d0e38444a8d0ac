// Decoding LAZ chunks while keeping only the points near the targets (issue 18). The profile of
// the one-thread reader (200 MB LAZ) put ~90 % of its time in laz-perf's wasm decoder and ~10 %
// in the JavaScript around it, so this does two things: (1) the nearness test runs on the
// records' integer X, Y, Z read through an Int32Array on the wasm heap, against each target's
// box converted once to integer units, and only the few points that pass are scaled to
// doubles; (2) chunks are independent (each restarts the arithmetic coder), so this same code
// runs on several worker threads (app/scan/laz.worker.ts), each decoding its own chunks, and
// the reader merges their answers in chunk order. The box test is a superset of the exact
// test in ScanExtractor.add (widened by whole units), so the targets come out identical.
// No file I/O here: the caller puts each chunk's bytes into the wasm heap.
import { LasFormatError, type LasHeader } from "./las";

type LazPerfModule = Awaited<ReturnType<typeof import("laz-perf").createLazPerf>>;
let lazPerf: Promise<LazPerfModule> | null = null;
/** laz-perf's module, instantiated once per thread (its .wasm ships inside the package). */
export async function lazPerfModule(): Promise<LazPerfModule> {
  if (!lazPerf) lazPerf = import("laz-perf").then((m) => (m.createLazPerf ?? (m as unknown as { default: typeof m }).default.createLazPerf)());
  return lazPerf;
}

/**
 * The targets' boxes (lo/hi, 3 numbers each, metres relative to `origin`) in the file's integer
 * units: 6 numbers per box, X0 X1 Y0 Y1 Z0 Z1, inclusive. A record whose X·scale + offset −
 * origin lies in [lo, hi] in double arithmetic has its integer X inside [X0, X1]: the bounds
 * are widened by one unit plus the rounding the double formula can make.
 */
export function integerBoxes(lo: ArrayLike<number>, hi: ArrayLike<number>, header: Pick<LasHeader, "scale" | "offset">, origin: readonly [number, number, number]): Float64Array {
  const k = Math.floor(lo.length / 3);
  const out = new Float64Array(6 * k);
  for (let i = 0; i < k; i++) {
    for (let j = 0; j < 3; j++) {
      const s = header.scale[j];
      const o = header.offset[j] - origin[j];
      const a = (lo[3 * i + j] - o) / s;
      const b = (hi[3 * i + j] - o) / s;
      // a few ulps of the metres involved, in units, plus one whole unit
      const slack = 1 + Math.ceil((8 * Number.EPSILON * (Math.abs(lo[3 * i + j]) + Math.abs(hi[3 * i + j]) + Math.abs(o))) / Math.abs(s));
      out[6 * i + 2 * j] = Math.floor(Math.min(a, b)) - slack;
      out[6 * i + 2 * j + 1] = Math.ceil(Math.max(a, b)) + slack;
    }
  }
  return out;
}

/** Per chunk: how many points it held and the integer X, Y, Z of those near a target. */
export type ChunkNear = { points: number; near: Int32Array; count: number };

/**
 * One laz-perf ChunkDecoder's worth of state on one thread: an input buffer the size of the
 * largest chunk and a block of decoded records in the wasm heap, and a growable buffer of the
 * near points. Memory is bounded by one chunk whatever the file's size.
 */
export class LazChunkDecoder {
  static readonly BLOCK = 4096;
  static readonly PAD = 64;
  readonly stride: number;
  #inCap = 0;
  #inPtr = 0;
  readonly #outPtr: number;
  #near = new Int32Array(3 * 1024);
  // an X-bucket index of the boxes: a point is tested against the few boxes of its bucket
  readonly #x0: number;
  readonly #x1: number;
  readonly #y0: number;
  readonly #y1: number;
  readonly #bucketW: number;
  readonly #bStart: Int32Array;
  readonly #bItems: Int32Array;

  constructor(
    readonly m: LazPerfModule,
    readonly pointFormat: number,
    readonly recordLength: number,
    /** integerBoxes(); null keeps every point */
    readonly boxes: Float64Array | null,
  ) {
    // records 4-byte aligned in the heap, so X, Y, Z read through one Int32Array
    this.stride = (recordLength + 3) & ~3;
    this.#outPtr = m._malloc(LazChunkDecoder.BLOCK * this.stride);
    const k = boxes ? boxes.length / 6 : 0;
    let x0 = Infinity,
      x1 = -Infinity,
      y0 = Infinity,
      y1 = -Infinity;
    for (let i = 0; i < k; i++) {
      x0 = Math.min(x0, boxes![6 * i]);
      x1 = Math.max(x1, boxes![6 * i + 1]);
      y0 = Math.min(y0, boxes![6 * i + 2]);
      y1 = Math.max(y1, boxes![6 * i + 3]);
    }
    this.#x0 = x0;
    this.#x1 = x1;
    this.#y0 = y0;
    this.#y1 = y1;
    const nb = k ? Math.min(4096, 4 * k) : 1;
    this.#bucketW = k ? (x1 - x0 + 1) / nb : 1;
    const counts = new Int32Array(nb + 1);
    const each = (i: number, f: (b: number) => void) => {
      const b0 = Math.max(0, Math.floor((boxes![6 * i] - x0) / this.#bucketW));
      const b1 = Math.min(nb - 1, Math.floor((boxes![6 * i + 1] - x0) / this.#bucketW));
      for (let b = b0; b <= b1; b++) f(b);
    };
    for (let i = 0; i < k; i++) each(i, (b) => counts[b + 1]++);
    for (let b = 0; b < nb; b++) counts[b + 1] += counts[b];
    const items = new Int32Array(counts[nb]);
    const fill = counts.slice(0, nb);
    for (let i = 0; i < k; i++) each(i, (b) => (items[fill[b]++] = i));
    this.#bStart = counts;
    this.#bItems = items;
  }

  /** Where to put a chunk of `bytes` compressed bytes (valid until the next call). */
  input(bytes: number): number {
    if (bytes + LazChunkDecoder.PAD > this.#inCap) {
      if (this.#inPtr) this.m._free(this.#inPtr);
      this.#inCap = bytes + LazChunkDecoder.PAD;
      this.#inPtr = this.m._malloc(this.#inCap);
    }
    return this.#inPtr;
  }

  /**
   * Decodes the chunk already in the heap at input(bytes) (`ci` numbers it for errors). The
   * answer's `near` is this decoder's buffer: read it before the next call.
   */
  decode(points: number, bytes: number, ci: number): ChunkNear {
    const m = this.m;
    m.HEAPU8.fill(0, this.#inPtr + bytes, this.#inPtr + bytes + LazChunkDecoder.PAD);
    const dec = new m.ChunkDecoder();
    let count = 0;
    try {
      try {
        dec.open(this.pointFormat, this.recordLength, this.#inPtr);
      } catch (e) {
        throw new LasFormatError(`LAZ chunk ${ci + 1} cannot be decoded: ${e instanceof Error ? e.message : String(e)}`);
      }
      const stride = this.stride;
      const { BLOCK } = LazChunkDecoder;
      for (let done = 0; done < points;) {
        const n = Math.min(BLOCK, points - done);
        for (let i = 0, p = this.#outPtr; i < n; i++, p += stride) dec.getPoint(p);
        // HEAP32 is replaced when the heap grows: take it after the decoding
        count = this.#keep(m.HEAP32, this.#outPtr >> 2, this.stride >> 2, n, count);
        done += n;
      }
    } finally {
      dec.delete();
    }
    return { points, near: this.#near, count };
  }

  /**
   * The near points of `n` records already decoded elsewhere (laz-rs): each `w` int32 long
   * from `h[at]`, X, Y, Z first. The answer's `near` is this decoder's buffer, as decode's.
   */
  filter(h: Int32Array, at: number, w: number, n: number): ChunkNear {
    const count = this.#keep(h, at, w, n, 0); // before taking #near: it may grow
    return { points: n, near: this.#near, count };
  }

  /** Appends to the near buffer (from `count` on) the X, Y, Z of the records in a box. */
  #keep(h: Int32Array, at: number, w: number, n: number, count: number): number {
    const boxes = this.boxes;
    if (!boxes) {
      count = this.#ensure(count, n);
      const near = this.#near;
      for (let i = 0; i < n; i++, at += w) {
        near[3 * count] = h[at];
        near[3 * count + 1] = h[at + 1];
        near[3 * count + 2] = h[at + 2];
        count++;
      }
      return count;
    }
    const x0 = this.#x0,
      x1 = this.#x1,
      y0 = this.#y0,
      y1 = this.#y1,
      bw = this.#bucketW,
      start = this.#bStart,
      items = this.#bItems;
    for (let i = 0; i < n; i++, at += w) {
      const X = h[at];
      const Y = h[at + 1];
      if (X < x0 || X > x1 || Y < y0 || Y > y1) continue;
      const b = Math.floor((X - x0) / bw);
      const Z = h[at + 2];
      for (let j = start[b], end = start[b + 1]; j < end; j++) {
        const o = 6 * items[j];
        if (X < boxes[o] || X > boxes[o + 1] || Y < boxes[o + 2] || Y > boxes[o + 3] || Z < boxes[o + 4] || Z > boxes[o + 5]) continue;
        count = this.#ensure(count, 1);
        const near = this.#near;
        near[3 * count] = X;
        near[3 * count + 1] = Y;
        near[3 * count + 2] = Z;
        count++;
        break;
      }
    }
    return count;
  }

  #ensure(count: number, more: number): number {
    if (3 * (count + more) > this.#near.length) {
      const next = new Int32Array(Math.max(2 * this.#near.length, 3 * (count + more)));
      next.set(this.#near.subarray(0, 3 * count));
      this.#near = next;
    }
    return count;
  }

  /** Frees the heap buffers (the module itself stays for the thread's next file). */
  close() {
    if (this.#inPtr) this.m._free(this.#inPtr);
    this.#inPtr = 0;
    this.#inCap = 0;
    this.m._free(this.#outPtr);
  }
}

/** Integer X, Y, Z triples to doubles relative to the origin, as decodeXyz forms them. */
export function scaleXyz(near: Int32Array, count: number, header: Pick<LasHeader, "scale" | "offset">, origin: readonly [number, number, number], out: Float64Array): void {
  const [sx, sy, sz] = header.scale;
  const ox = header.offset[0] - origin[0];
  const oy = header.offset[1] - origin[1];
  const oz = header.offset[2] - origin[2];
  for (let i = 0; i < 3 * count; i += 3) {
    out[i] = near[i] * sx + ox;
    out[i + 1] = near[i + 1] * sy + oy;
    out[i + 2] = near[i + 2] * sz + oz;
  }
}
