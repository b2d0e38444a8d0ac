// Reads a LAS or LAZ file from disk block by block and hands each block of points, as xyz
// relative to a chosen origin in double precision, to a callback: the whole cloud is never
// held in memory. LAS is read straight from the file in blocks of records. LAZ is streamed
// chunk by chunk: the LASzip VLR and the chunk table (app/scan/laszip.ts) say where each
// compressed chunk lies and how many points it holds; each chunk is read from the file into
// the heap of laz-perf (the LASzip decoder compiled to WebAssembly that @loaders.gl/las also
// uses, its .wasm shipped inside the package, nothing fetched) and decoded by its ChunkDecoder,
// so memory is bounded by one chunk (50 000 points by default), whatever the file's size.
// Given the targets' boxes (`near`), a LAZ file's chunks are decoded on a pool of worker
// threads (app/scan/laz.worker.ts, one per core) and only the points in the boxes come back,
// merged in chunk order: the same points in the same order as one thread would give.
import { existsSync } from "node:fs";
import { open, type FileHandle } from "node:fs/promises";
import { availableParallelism } from "node:os";
import { fileURLToPath } from "node:url";
import Tinypool from "tinypool";
import { decodeXyz, HEADER_BYTES, LasFormatError, parseLasHeader, type LasHeader } from "./las";
import { integerBoxes, LazChunkDecoder, lazPerfModule, scaleXyz } from "./laz-chunks";
import { decodeChunkTable, findLaszipVlr, VARIABLE_CHUNK_SIZE, type LazChunk } from "./laszip";
import type { LazTask, LazTaskAnswer } from "./laz.worker";
import { lazWorkerUrl } from "./laz-worker-url.server";

/** Points decoded per block (a few MB of records and of doubles). */
const BLOCK_POINTS = 65_536;

/**
 * `count` points of `xyz`; `seen` = the points of the file this block stands for (more than
 * `count` when points away from the targets were left out).
 */
export type OnBlock = (xyz: Float64Array, count: number, seen: number) => void;

export type ReadOptions = {
  /**
   * The targets' boxes (3 numbers each, metres relative to the origin, as
   * ScanExtractor.boxes() gives them): points outside every box may be left out.
   */
  near?: { lo: ArrayLike<number>; hi: ArrayLike<number> };
  /** LAZ worker threads; default SCAN_WORKERS or the machine's cores. 0 or 1: this thread. */
  threads?: number;
  /**
   * "laz-perf": the worker threads decode with laz-perf only, not laz-rs (app/scan/laz-rs.ts):
   * for the bench's and tests' comparisons.
   */
  decoder?: "laz-perf";
};

export async function readPointCloud(path: string, origin: readonly [number, number, number], onBlock: OnBlock, opts: ReadOptions = {}): Promise<LasHeader> {
  const fh = await open(path, "r");
  try {
    const { size } = await fh.stat();
    const head = new Uint8Array(Math.min(HEADER_BYTES, size));
    await fh.read(head, 0, head.length, 0);
    const header = parseLasHeader(head);
    if (header.compressed) {
      await readLaz(path, fh, size, header, origin, onBlock, opts);
      return header;
    }
    const need = header.pointsOffset + header.pointCount * header.recordLength;
    if (size < need) {
      const have = Math.max(0, Math.floor((size - header.pointsOffset) / header.recordLength));
      throw new LasFormatError(`the file is cut short: its header announces ${header.pointCount} points, it holds ${have}`);
    }
    const buf = new Uint8Array(BLOCK_POINTS * header.recordLength);
    const xyz = new Float64Array(BLOCK_POINTS * 3);
    let done = 0;
    let pos = header.pointsOffset;
    while (done < header.pointCount) {
      const n = Math.min(BLOCK_POINTS, header.pointCount - done);
      const want = n * header.recordLength;
      let got = 0;
      while (got < want) {
        const { bytesRead } = await fh.read(buf, got, want - got, pos + got);
        if (bytesRead === 0) throw new LasFormatError("the file ended before its last point");
        got += bytesRead;
      }
      decodeXyz(buf, n, header, origin, xyz);
      onBlock(xyz, n, n);
      done += n;
      pos += want;
    }
    return header;
  } finally {
    await fh.close();
  }
}

async function readLaz(path: string, fh: FileHandle, size: number, header: LasHeader, origin: readonly [number, number, number], onBlock: OnBlock, opts: ReadOptions) {
  const readAt = async (at: number, length: number, into?: Uint8Array, intoAt = 0) => {
    const buf = into ?? new Uint8Array(length);
    let got = 0;
    while (got < length) {
      const { bytesRead } = await fh.read(buf, intoAt + got, length - got, at + got);
      if (bytesRead === 0) throw new LasFormatError("the LAZ file ended early");
      got += bytesRead;
    }
    return buf;
  };
  if (header.pointsOffset + 8 > size) throw new LasFormatError("the LAZ file ends before its point data");
  const vlrCount = new DataView((await readAt(100, 4)).buffer).getUint32(0, true);
  const vlr = findLaszipVlr(await readAt(header.headerSize, header.pointsOffset - header.headerSize), vlrCount);
  if (vlr.compressor !== 2 && vlr.compressor !== 3) {
    throw new LasFormatError(`this LAZ file is compressed point by point without chunks (LASzip compressor ${vlr.compressor}); re-compress it with a current LASzip (chunked) and upload it again`);
  }
  let tableAt = Number(new DataView((await readAt(header.pointsOffset, 8)).buffer).getBigInt64(0, true));
  // a writer that could not seek back leaves −1 and puts the offset in the file's last 8 bytes
  if (tableAt === -1) tableAt = Number(new DataView((await readAt(size - 8, 8)).buffer).getBigInt64(0, true));
  if (!(tableAt >= header.pointsOffset + 8 && tableAt + 8 <= size)) throw new LasFormatError("the LAZ chunk table offset points outside the file");
  // the table is small (a few bytes per chunk) but its end is not stored: read up to 1 MB of it
  const table = await readAt(tableAt, Math.min(size - tableAt, 1 << 20));
  const chunks = decodeChunkTable(table, header, vlr, size);

  const boxes = opts.near ? integerBoxes(opts.near.lo, opts.near.hi, header, origin) : null;
  const threads = opts.threads ?? scanWorkerCount();
  const pool = boxes && threads > 1 && chunks.length >= MIN_CHUNKS_FOR_POOL ? lazPool(threads) : null;
  if (pool && boxes) {
    // fixed-size chunks can go to laz-rs as small files of their own: it needs the header
    const head = vlr.chunkSize !== VARIABLE_CHUNK_SIZE && opts.decoder !== "laz-perf" ? await readAt(0, header.pointsOffset) : undefined;
    await readLazPooled(pool, threads, path, header, head, chunks, boxes, origin, onBlock);
    return;
  }
  const m = await lazPerfModule();
  const dec = new LazChunkDecoder(m, header.pointFormat, header.recordLength, boxes);
  let xyz = new Float64Array(3 * 4096);
  try {
    for (const [ci, chunk] of chunks.entries()) {
      // straight into the wasm heap (nothing allocates there while the read runs)
      const at = dec.input(chunk.bytes); // before taking HEAPU8: a malloc may grow the heap
      await readAt(chunk.offset, chunk.bytes, m.HEAPU8, at);
      const r = dec.decode(chunk.points, chunk.bytes, ci);
      if (xyz.length < 3 * r.count) xyz = new Float64Array(3 * r.count);
      scaleXyz(r.near, r.count, header, origin, xyz);
      onBlock(xyz, r.count, r.points);
    }
  } finally {
    dec.close();
  }
}

// ---------------------------------------------------------------------------------------------
// The LAZ worker pool

/** Below this many chunks one thread is quicker than starting others. */
const MIN_CHUNKS_FOR_POOL = 8;
/** Chunks per task: a few hundred thousand points, so a task outweighs its message. */
const CHUNKS_PER_TASK = 4;

export function scanWorkerCount(env: NodeJS.ProcessEnv = process.env): number {
  const v = env.SCAN_WORKERS;
  if (v !== undefined && v !== "") {
    const n = Number(v);
    if (!Number.isInteger(n) || n < 0 || n > 64) throw new Error(`SCAN_WORKERS must be a whole number from 0 to 64 (got "${v}")`);
    return n;
  }
  return Math.min(8, availableParallelism());
}

// one pool per thread count (one in practice: SCAN_WORKERS), so a read never loses its pool
const pools = new Map<number, Tinypool>();
function lazPool(threads: number): Tinypool | null {
  const live = pools.get(threads);
  if (live) return live;
  const file = fileURLToPath(lazWorkerUrl);
  if (!existsSync(file)) {
    // a build without its worker chunk still reads scans: slower, never refused
    console.error(`scans: the LAZ worker module ${file} is missing; decoding on this thread`);
    return null;
  }
  const tp = new Tinypool({
    // from the sources the worker is TypeScript: a small JavaScript module loads it through tsx
    filename: file.endsWith(".ts") ? new URL("./laz-worker-tsx.mjs", import.meta.url).href : lazWorkerUrl,
    minThreads: 0,
    maxThreads: threads,
    // threads (each with its wasm heap) go away a while after the last scan
    idleTimeout: 30_000,
  });
  pools.set(threads, tp);
  return tp;
}

/**
 * Starts the LAZ threads (and their laz-perf modules) ahead of a scan: the bench times this
 * apart from the extraction. Threads left idle stop after the pool's idle timeout.
 */
export async function warmScanPool(threads = scanWorkerCount()): Promise<void> {
  const tp = threads > 1 ? lazPool(threads) : null;
  if (!tp) return;
  const empty: LazTask = { path: "", pointFormat: 0, recordLength: 20, boxes: null, chunks: [], first: 0 };
  await Promise.all(Array.from({ length: threads }, () => tp.run(empty, { name: "decodeChunks" })));
}

// tasks decoded by each decoder (tests check which one ran)
const decodedBy = { "laz-rs": 0, "laz-perf": 0 };
/** Tasks the LAZ threads decoded with laz-rs and with laz-perf since the process started. */
export function scanPoolDecoders(): { "laz-rs": number; "laz-perf": number } {
  return { ...decodedBy };
}

/** Tasks the LAZ threads have finished since the pool started (tests check the pool ran). */
export function scanPoolCompleted(): number {
  let n = 0;
  for (const tp of pools.values()) n += tp.completed;
  return n;
}

/** For tests and shutdown: stop the LAZ threads; the next scan starts them again. */
export async function closeScanPool() {
  const all = [...pools.values()];
  pools.clear();
  await Promise.all(all.map((tp) => tp.destroy()));
}

/**
 * The pool's tasks as [first chunk, chunk count] runs in file order: CHUNKS_PER_TASK chunks
 * each, and, in a file long enough for it to matter (8 tasks a thread or more), one chunk each
 * over the last two tasks a thread, so no thread sits idle while another ends a long task.
 */
export function lazTaskRuns(chunks: number, threads: number): [number, number][] {
  const tail = chunks >= 8 * threads * CHUNKS_PER_TASK ? 2 * threads * CHUNKS_PER_TASK : 0;
  const body = chunks - tail;
  const runs: [number, number][] = [];
  for (let first = 0; first < chunks;) {
    const n = first < body ? Math.min(CHUNKS_PER_TASK, body - first) : 1;
    runs.push([first, n]);
    first += n;
  }
  return runs;
}

async function readLazPooled(
  tp: Tinypool,
  threads: number,
  path: string,
  header: LasHeader,
  head: Uint8Array | undefined,
  chunks: LazChunk[],
  boxes: Float64Array,
  origin: readonly [number, number, number],
  onBlock: OnBlock,
) {
  const tasks: LazTask[] = lazTaskRuns(chunks.length, threads).map(([first, n]) => ({
    path,
    pointFormat: header.pointFormat,
    recordLength: header.recordLength,
    boxes,
    chunks: chunks.slice(first, first + n),
    first,
    head,
  }));
  // a window of tasks in flight (two per thread keeps every thread busy); answers are taken in
  // task order, so the points reach onBlock in the file's order whichever thread ends first
  const window = 2 * threads;
  const inFlight: Promise<LazTaskAnswer>[] = [];
  let next = 0;
  const submit = () => {
    if (next < tasks.length) inFlight.push(tp.run(tasks[next++], { name: "decodeChunks" }) as Promise<LazTaskAnswer>);
  };
  while (next < Math.min(window, tasks.length)) submit();
  let xyz = new Float64Array(3 * 4096);
  try {
    while (inFlight.length) {
      const answer = await inFlight.shift()!;
      submit();
      if ("error" in answer) throw answer.format ? new LasFormatError(answer.error) : new Error(answer.error);
      if (answer.by) decodedBy[answer.by]++;
      for (const c of answer.chunks) {
        const count = c.near.length / 3;
        if (xyz.length < c.near.length) xyz = new Float64Array(c.near.length);
        scaleXyz(c.near, count, header, origin, xyz);
        onBlock(xyz, count, c.points);
      }
    }
  } finally {
    // a failure leaves the others to finish on their own; their answers are dropped
    for (const p of inFlight) p.catch(() => {});
  }
}
