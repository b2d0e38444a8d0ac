// Reads a LAS or LAZ file from disk block by block and hands each block of points, as xyz
// relative to a chosen origin in double precision, to a callback: the whole cloud is never
// held in memory. LAS is read straight from the file in blocks of records; LAZ goes through
// laz-perf (the LASzip decoder compiled to WebAssembly that @loaders.gl/las also uses, its
// .wasm shipped inside the package, nothing fetched), which needs the compressed file in its
// heap but decodes one block of points at a time.
import { open } from "node:fs/promises";
import { decodeXyz, HEADER_BYTES, LasFormatError, parseLasHeader, type LasHeader } from "./las";

/** Points decoded per block (a few MB of records and of doubles). */
const BLOCK_POINTS = 65_536;

export type OnBlock = (xyz: Float64Array, count: number) => void;

type LazPerfModule = Awaited<ReturnType<typeof import("laz-perf").createLazPerf>>;
let lazPerf: Promise<LazPerfModule> | null = null;
async function lazPerfModule(): Promise<LazPerfModule> {
  if (!lazPerf) lazPerf = import("laz-perf").then((m) => (m.createLazPerf ?? (m as unknown as { default: typeof m }).default.createLazPerf)());
  return lazPerf;
}

export async function readPointCloud(path: string, origin: readonly [number, number, number], onBlock: OnBlock): Promise<LasHeader> {
  const fh = await open(path, "r");
  try {
    const { size } = await fh.stat();
    const head = new Uint8Array(Math.min(HEADER_BYTES, size));
    await fh.read(head, 0, head.length, 0);
    const header = parseLasHeader(head);
    if (header.compressed) {
      await readLaz(fh, size, header, origin, onBlock);
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
      onBlock(xyz, n);
      done += n;
      pos += want;
    }
    return header;
  } finally {
    await fh.close();
  }
}

async function readLaz(fh: Awaited<ReturnType<typeof open>>, size: number, header: LasHeader, origin: readonly [number, number, number], onBlock: OnBlock) {
  const m = await lazPerfModule();
  const filePtr = m._malloc(size);
  const laz = new m.LASZip();
  let blockPtr = 0;
  try {
    let got = 0;
    while (got < size) {
      const chunk = Math.min(16 << 20, size - got);
      const { bytesRead } = await fh.read(m.HEAPU8, filePtr + got, chunk, got);
      if (bytesRead === 0) throw new LasFormatError("the LAZ file ended early");
      got += bytesRead;
    }
    try {
      laz.open(filePtr, size);
    } catch (e) {
      throw new LasFormatError(`the LAZ data cannot be decoded: ${e instanceof Error ? e.message : String(e)}`);
    }
    const count = laz.getCount();
    const len = laz.getPointLength();
    blockPtr = m._malloc(BLOCK_POINTS * len);
    const xyz = new Float64Array(BLOCK_POINTS * 3);
    const fmt = { recordLength: len, scale: header.scale, offset: header.offset };
    for (let done = 0; done < count; ) {
      const n = Math.min(BLOCK_POINTS, count - done);
      for (let i = 0; i < n; i++) laz.getPoint(blockPtr + i * len);
      // HEAPU8 is replaced when the heap grows: take it after the decoding
      decodeXyz(m.HEAPU8.subarray(blockPtr, blockPtr + n * len), n, fmt, origin, xyz);
      onBlock(xyz, n);
      done += n;
    }
  } finally {
    laz.delete();
    if (blockPtr) m._free(blockPtr);
    m._free(filePtr);
  }
}
