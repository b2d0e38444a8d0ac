// A LAZ worker thread (issue 18): decodes a run of chunks of one file and answers, per chunk,
// its point count and the integer X, Y, Z of the points near the targets. Started by
// app/scan/point-cloud.server.ts through tinypool; the answer crosses the thread boundary by
// structured clone (a few kilobytes: only the points near the targets travel). Each thread
// holds one laz-perf module and one chunk at a time, so its memory is bounded by a chunk.
import { closeSync, openSync, readSync } from "node:fs";
import { LasFormatError } from "./las";
import { LazChunkDecoder, lazPerfModule } from "./laz-chunks";
import { decodeRun, lazRsModule, recordsBuffer, runFile } from "./laz-rs";
import type { LazChunk } from "./laszip";

export type LazTask = {
  path: string;
  pointFormat: number;
  recordLength: number;
  boxes: Float64Array | null;
  chunks: LazChunk[];
  first: number;
  /**
   * The file's bytes up to its point data, when its chunks are of fixed size and its records
   * a whole number of int32: the task's chunks then go to laz-rs in one call (laz-rs.ts).
   */
  head?: Uint8Array;
};
export type LazTaskAnswer = { chunks: { points: number; near: Int32Array }[]; by?: "laz-rs" | "laz-perf" } | { error: string; format: boolean };

export async function decodeChunks(task: LazTask): Promise<LazTaskAnswer> {
  try {
    const m = await lazPerfModule();
    const rs = await lazRsModule();
    // an empty task only starts the thread and its modules (warmScanPool)
    if (!task.chunks.length) return { chunks: [] };
    const dec = new LazChunkDecoder(m, task.pointFormat, task.recordLength, task.boxes);
    const fd = openSync(task.path, "r");
    try {
      const out: { points: number; near: Int32Array }[] = [];
      if (rs && task.head && task.recordLength % 4 === 0) {
        // the task's chunks are consecutive in the file: one read, one decoder call
        const first = task.chunks[0];
        const last = task.chunks[task.chunks.length - 1];
        const bytes = last.offset + last.bytes - first.offset;
        const points = task.chunks.reduce((s, c) => s + c.points, 0);
        const { file, bodyAt } = runFile(task.head, points, bytes);
        for (let got = 0; got < bytes;) {
          const n = readSync(fd, file, bodyAt + got, bytes - got, first.offset + got);
          if (n === 0) throw new LasFormatError("the LAZ file ended early");
          got += n;
        }
        const records = recordsBuffer(points * task.recordLength);
        try {
          decodeRun(rs, file, records);
        } catch (e) {
          const which = task.chunks.length > 1 ? `chunks ${task.first + 1}–${task.first + task.chunks.length}` : `chunk ${task.first + 1}`;
          throw new LasFormatError(`LAZ ${which} cannot be decoded: ${e instanceof Error ? e.message : String(e)}`);
        }
        const h = new Int32Array(records.buffer, records.byteOffset, records.length >> 2);
        const w = task.recordLength >> 2;
        let at = 0;
        for (const c of task.chunks) {
          const r = dec.filter(h, at, w, c.points);
          out.push({ points: c.points, near: r.near.slice(0, 3 * r.count) });
          at += c.points * w;
        }
        return { chunks: out, by: "laz-rs" };
      }
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
      return { chunks: out, by: "laz-perf" };
    } finally {
      closeSync(fd);
      dec.close();
    }
  } catch (e) {
    // the error's class does not cross the thread boundary: say whether it is the file's fault
    return { error: e instanceof Error ? e.message : String(e), format: e instanceof LasFormatError };
  }
}
