// Reads a LAS or LAZ file from disk block by block and hands each block of points, as xyz
// relative to a chosen origin in double precision, to a callback: the whole cloud is never
// held in memory. LAS is read straight from the file in blocks of records. LAZ is streamed
// chunk by chunk: the LASzip VLR and the chunk table (app/scan/laszip.ts) say where each
// compressed chunk lies and how many points it holds; each chunk is read from the file into
// the heap of laz-perf (the LASzip decoder compiled to WebAssembly that @loaders.gl/las also
// uses, its .wasm shipped inside the package, nothing fetched) and decoded by its ChunkDecoder,
// so memory is bounded by one chunk (50 000 points by default), whatever the file's size.
import { open, type FileHandle } from "node:fs/promises";
import { decodeXyz, HEADER_BYTES, LasFormatError, parseLasHeader, type LasHeader } from "./las";
import { decodeChunkTable, findLaszipVlr } from "./laszip";

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

async function readLaz(fh: FileHandle, size: number, header: LasHeader, origin: readonly [number, number, number], onBlock: OnBlock) {
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

  const m = await lazPerfModule();
  const len = header.recordLength;
  const fmt = { recordLength: len, scale: header.scale, offset: header.offset };
  const xyz = new Float64Array(BLOCK_POINTS * 3);
  const maxPoints = chunks.reduce((a, c) => Math.max(a, c.points), 0);
  // one chunk of compressed bytes (plus slack: the decoder may look a few bytes ahead) and one
  // block of decoded records live in the wasm heap; the heap stays the size of the largest chunk
  let inCap = 0;
  let inPtr = 0;
  const outPtr = m._malloc(Math.min(BLOCK_POINTS, Math.max(1, maxPoints)) * len);
  const PAD = 64;
  try {
    for (const [ci, chunk] of chunks.entries()) {
      if (chunk.bytes + PAD > inCap) {
        if (inPtr) m._free(inPtr);
        inCap = chunk.bytes + PAD;
        inPtr = m._malloc(inCap);
      }
      // straight into the wasm heap (nothing allocates there while the read runs)
      await readAt(chunk.offset, chunk.bytes, m.HEAPU8, inPtr);
      m.HEAPU8.fill(0, inPtr + chunk.bytes, inPtr + chunk.bytes + PAD);
      const dec = new m.ChunkDecoder();
      try {
        try {
          dec.open(header.pointFormat, len, inPtr);
        } catch (e) {
          throw new LasFormatError(`LAZ chunk ${ci + 1} cannot be decoded: ${e instanceof Error ? e.message : String(e)}`);
        }
        for (let done = 0; done < chunk.points;) {
          const n = Math.min(BLOCK_POINTS, chunk.points - done);
          for (let i = 0; i < n; i++) dec.getPoint(outPtr + i * len);
          // HEAPU8 is replaced when the heap grows: take it after the decoding
          decodeXyz(m.HEAPU8.subarray(outPtr, outPtr + n * len), n, fmt, origin, xyz);
          onBlock(xyz, n);
          done += n;
        }
      } finally {
        dec.delete();
      }
    }
  } finally {
    if (inPtr) m._free(inPtr);
    m._free(outPtr);
  }
}
