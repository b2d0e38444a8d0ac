// The batch LAZ decoder (issue 18): laz-rs (the LASzip format in Rust, T. Montaigu and others)
// compiled to WebAssembly, as @loaders.gl/las (MIT) ships it (dist/libs/laz-rs-wasm, a
// file outside that package's exports, so it is found from the package's own path). Its
// decompress_many decodes a run of points in one call, ~20 % more points per CPU-second than
// laz-perf's one call per point on the bench's LAZ (docs/decisions/0008). It reads whole
// files, so a run of chunks is handed to it as a small LAZ file: the original header and
// VLRs (point count set to the run's), no chunk table (offset −1: laz-rs then reads the
// chunks in order), and the chunks' bytes. Used by the LAZ worker threads for files of fixed
// chunk size; laz-perf stays for everything else. No file I/O here beyond loading the module.
import { readFileSync } from "node:fs";
import { createRequire } from "node:module";
import { dirname, join } from "node:path";
import { pathToFileURL } from "node:url";

type LazRs = { WasmLasZipDecompressor: new (buf: Uint8Array) => { decompress_many(out: Uint8Array): void; free(): void } };
let lazRs: Promise<LazRs | null> | null = null;

/** laz-rs, instantiated once per thread; null when @loaders.gl/las or the file is missing. */
export function lazRsModule(): Promise<LazRs | null> {
  lazRs ??= (async () => {
    try {
      const root = dirname(createRequire(import.meta.url).resolve("@loaders.gl/las"));
      const dir = join(root, "libs", "laz-rs-wasm");
      const mod = (await import(pathToFileURL(join(dir, "laz_rs_wasm.js")).href)) as LazRs & { default: (o: { module_or_path: Uint8Array }) => Promise<unknown> };
      await mod.default({ module_or_path: readFileSync(join(dir, "laz_rs_wasm_bg.wasm")) });
      return mod;
    } catch (e) {
      console.error(`scans: laz-rs could not be loaded (${e instanceof Error ? e.message : String(e)}); LAZ chunks are decoded by laz-perf`);
      return null;
    }
  })();
  return lazRs;
}

// one run file and one records buffer per thread, grown as needed (a task is ~1.5 MB of LAZ and
// ~4 MB of records: new ones for every task only fed the garbage collector)
let runBuf = new Uint8Array(0);
let recBuf = new Uint8Array(0);

/**
 * The small LAZ file of a run of consecutive chunks: `head` = the file's bytes up to its point
 * data (header and VLRs). Answers the file (valid until the next call) and where in it the
 * chunks' bytes go.
 */
export function runFile(head: Uint8Array, points: number, bodyBytes: number): { file: Uint8Array; bodyAt: number } {
  const size = head.length + 8 + bodyBytes;
  if (runBuf.length < size) runBuf = new Uint8Array(Math.ceil(size * 1.25));
  const file = runBuf.subarray(0, size);
  file.set(head);
  const dv = new DataView(file.buffer, file.byteOffset, file.byteLength);
  dv.setUint32(107, points, true); // legacy point count (LAS 1.2–1.3; 1.4 when it fits)
  if (head[25] >= 4 && head.length >= 255) dv.setBigUint64(247, BigInt(points), true);
  dv.setBigInt64(head.length, -1n, true); // no chunk table: read in order
  return { file, bodyAt: head.length + 8 };
}

/** A buffer for `bytes` of decoded records (valid until the next call). */
export function recordsBuffer(bytes: number): Uint8Array {
  if (recBuf.length < bytes) recBuf = new Uint8Array(Math.ceil(bytes * 1.25));
  return recBuf.subarray(0, bytes);
}

/** Decodes every point of a run file into `out` (points × record length bytes). */
export function decodeRun(rs: LazRs, file: Uint8Array, out: Uint8Array): void {
  const d = new rs.WasmLasZipDecompressor(file);
  try {
    d.decompress_many(out);
  } finally {
    d.free();
  }
}
