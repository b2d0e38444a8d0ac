// ASPRS LAS 1.2–1.4 public header and point records (LAS Specification 1.4 R15, ASPRS 2019):
// just what a check-shot needs — where the points start, how long a record is, the point count,
// scale and offset. X, Y, Z are the first three little-endian int32 of every point record in
// formats 0–10; a coordinate is X·scale + offset. No I/O here: the reader feeds the bytes.

export type LasHeader = {
  versionMajor: number;
  versionMinor: number;
  headerSize: number;
  pointsOffset: number;
  /** 0–10 (the two top bits of the byte flag LAZ compression and are removed). */
  pointFormat: number;
  /** True when bit 7 or 6 of the format byte is set: a LAZ (LASzip-compressed) file. */
  compressed: boolean;
  recordLength: number;
  pointCount: number;
  scale: [number, number, number];
  offset: [number, number, number];
  min: [number, number, number];
  max: [number, number, number];
};

export class LasFormatError extends Error {
  constructor(message: string) {
    super(message);
    this.name = "LasFormatError";
  }
}

/** Least record length of each point format (bytes), LAS 1.4 R15 tables 7–22. */
export const MIN_RECORD_LENGTH = [20, 28, 26, 34, 57, 63, 30, 36, 38, 59, 67];

/** Bytes of the public header needed to read it: 227 (1.2), 235 (1.3), 375 (1.4). */
export const HEADER_BYTES = 375;

export function parseLasHeader(bytes: Uint8Array): LasHeader {
  if (bytes.length < 227) throw new LasFormatError("the file is too short to be a LAS file (no complete header)");
  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const sig = String.fromCharCode(bytes[0], bytes[1], bytes[2], bytes[3]);
  if (sig !== "LASF") throw new LasFormatError('not a LAS or LAZ file (it does not start with "LASF")');
  const versionMajor = bytes[24];
  const versionMinor = bytes[25];
  if (versionMajor !== 1 || versionMinor < 2 || versionMinor > 4) {
    throw new LasFormatError(`LAS version ${versionMajor}.${versionMinor} is not read here; versions 1.2 to 1.4 are`);
  }
  const headerSize = dv.getUint16(94, true);
  const pointsOffset = dv.getUint32(96, true);
  const formatByte = bytes[104];
  const compressed = (formatByte & 0xc0) !== 0;
  const pointFormat = formatByte & 0x3f;
  const recordLength = dv.getUint16(105, true);
  if (pointFormat > 10) throw new LasFormatError(`point data format ${pointFormat} is not defined (LAS knows 0 to 10)`);
  if (recordLength < MIN_RECORD_LENGTH[pointFormat]) {
    throw new LasFormatError(`a point record of format ${pointFormat} needs at least ${MIN_RECORD_LENGTH[pointFormat]} bytes, the header says ${recordLength}`);
  }
  let pointCount = dv.getUint32(107, true);
  if (versionMinor >= 4) {
    if (bytes.length < 375) throw new LasFormatError("the LAS 1.4 header is incomplete");
    const big = dv.getBigUint64(247, true);
    if (big > BigInt(Number.MAX_SAFE_INTEGER)) throw new LasFormatError("the point count is too large");
    // 1.4 writers set the legacy count to 0 above 2³² − 1 points or for formats 6–10
    if (Number(big) > 0 || pointCount === 0) pointCount = Number(big);
  }
  const f64 = (o: number) => dv.getFloat64(o, true);
  const scale: [number, number, number] = [f64(131), f64(139), f64(147)];
  const offset: [number, number, number] = [f64(155), f64(163), f64(171)];
  for (const s of scale) if (!(Number.isFinite(s) && s !== 0)) throw new LasFormatError(`the header's scale factor ${s} is not usable`);
  for (const o of offset) if (!Number.isFinite(o)) throw new LasFormatError(`the header's offset ${o} is not usable`);
  if (pointsOffset < headerSize) throw new LasFormatError("the header says the points start inside the header");
  return {
    versionMajor,
    versionMinor,
    headerSize,
    pointsOffset,
    pointFormat,
    compressed,
    recordLength,
    pointCount,
    scale,
    offset,
    max: [f64(179), f64(195), f64(211)],
    min: [f64(187), f64(203), f64(219)],
  };
}

/**
 * Decodes `count` point records from `bytes` (starting at a record boundary) into flat xyz
 * triples relative to `origin`, in double precision: (X·scale + offset) − origin. The offset
 * minus the origin is formed first, so grid coordinates of thousands of metres lose nothing.
 */
export function decodeXyz(bytes: Uint8Array, count: number, header: Pick<LasHeader, "recordLength" | "scale" | "offset">, origin: readonly [number, number, number], out: Float64Array): void {
  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const len = header.recordLength;
  const [sx, sy, sz] = header.scale;
  const ox = header.offset[0] - origin[0];
  const oy = header.offset[1] - origin[1];
  const oz = header.offset[2] - origin[2];
  for (let i = 0, o = 0; i < count; i++, o += len) {
    out[3 * i] = dv.getInt32(o, true) * sx + ox;
    out[3 * i + 1] = dv.getInt32(o + 4, true) * sy + oy;
    out[3 * i + 2] = dv.getInt32(o + 8, true) * sz + oz;
  }
}
