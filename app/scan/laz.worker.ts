// A LAZ worker thread (issue 18): decodes a run of chunks of one file and answers, per chunk,
// its point count and the integer X, Y, Z of the points near the targets. Started by
// app/scan/point-cloud.server.ts through tinypool; the answer crosses the thread boundary by
// structured clone (a few kilobytes: only the points near the targets travel). Each thread
// holds one laz-perf module and one chunk at a time, so its memory is bounded by a chunk.
import { closeSync, openSync, readSync } from "node:fs";
import { LasFormatError } from "./las";
import { LazChunkDecoder, lazPerfModule } from "./laz-chunks";
import type { LazChunk } from "./laszip";

export type LazTask = { path: string; pointFormat: number; recordLength: number; boxes: Float64Array | null; chunks: LazChunk[]; first: number };
export type LazTaskAnswer = { chunks: { points: number; near: Int32Array }[] } | { error: string; format: boolean };

export async function decodeChunks(task: LazTask): Promise<LazTaskAnswer> {
  try {
    const m = await lazPerfModule();
    // an empty task only starts the thread and its module (warmScanPool)
    if (!task.chunks.length) return { chunks: [] };
    const dec = new LazChunkDecoder(m, task.pointFormat, task.recordLength, task.boxes);
    const fd = openSync(task.path, "r");
    try {
      const out: { points: number; near: Int32Array }[] = [];
      for (const [i, c] of task.chunks.entries()) {
        const at = dec.input(c.bytes);
        for (let got = 0; got < c.bytes;) {
          // straight into the wasm heap (nothing allocates there while the read runs)
          const n = readSync(fd, m.HEAPU8, at + got, c.bytes - got, c.offset + got);
          if (n === 0) throw new LasFormatError("the LAZ file ended early");
          got += n;
        }
        const r = dec.decode(c.points, c.bytes, task.first + i);
        out.push({ points: r.points, near: r.near.slice(0, 3 * r.count) });
      }
      return { chunks: out };
    } finally {
      closeSync(fd);
      dec.close();
    }
  } catch (e) {
    // the error's class does not cross the thread boundary: say whether it is the file's fault
    return { error: e instanceof Error ? e.message : String(e), format: e instanceof LasFormatError };
  }
}
