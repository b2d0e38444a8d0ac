import { mkdirSync, writeFileSync } from "node:fs";
import { resolve } from "node:path";
import { expect, test } from "vitest";
import { LASLoader } from "@loaders.gl/las";
import { readPointCloud } from "~/scan/point-cloud.server";
import { LasFormatError, parseLasHeader } from "~/scan/las";
import { lasFile, rng, type LasOptions, type V3 } from "../support/scan-fixtures";

// The chunked LAS reader against the file's own scaled integers (written by the fixture helper
// per the ASPRS LAS 1.4 R15 layout) and against @loaders.gl/las (an independent reader from the
// npm registry) on the same files.

const dir = resolve(process.env.DATA_DIR!, "las");
mkdirSync(dir, { recursive: true });

// grid coordinates of hundreds of kilometres, 0.1 mm resolution
const offset: V3 = [512_000, 6_350_000, 100];
const station: V3 = [512_345.6789, 6_350_123.4567, 101.2345];
function points(n: number): V3[] {
  const r = rng(3);
  return Array.from({ length: n }, () => [station[0] + (r.uniform() - 0.5) * 200, station[1] + (r.uniform() - 0.5) * 200, station[2] + (r.uniform() - 0.5) * 20] as V3);
}
/** What the file holds: the coordinates rounded to its scale, as integers times scale plus offset. */
const quantised = (p: V3): V3 => [0, 1, 2].map((k) => Math.round((p[k] - offset[k]) / 0.0001) * 0.0001 + offset[k]) as V3;

async function readAll(path: string, origin: V3) {
  const out: number[] = [];
  const header = await readPointCloud(path, origin, (xyz, n) => {
    for (let i = 0; i < 3 * n; i++) out.push(xyz[i]);
  });
  return { header, out };
}

const cases: [string, LasOptions][] = [
  ["1.2 format 1", { version: 2, pointFormat: 1, offset }],
  ["1.3 format 3, a VLR before the points", { version: 3, pointFormat: 3, offset, vlrBytes: 40 }],
  ["1.4 format 6, extra bytes", { version: 4, pointFormat: 6, offset, extraBytes: 6 }],
  ["1.4 format 10", { version: 4, pointFormat: 10, offset, vlrBytes: 10 }],
  ["1.2 format 0", { version: 2, pointFormat: 0, offset }],
];

test.each(cases)("LAS %s: every point, relative to the station, in double precision", async (_name, o) => {
  const pts = points(150_000); // more than two read blocks
  const path = resolve(dir, `case-${o.version}-${o.pointFormat}.las`);
  writeFileSync(path, lasFile(pts, o));
  const { header, out } = await readAll(path, station);
  expect(header.pointCount).toBe(pts.length);
  expect(out.length).toBe(3 * pts.length);
  for (let i = 0; i < pts.length; i += 997) {
    const q = quantised(pts[i]);
    for (let k = 0; k < 3; k++) expect(Math.abs(out[3 * i + k] - (q[k] - station[k]))).toBeLessThan(1e-9);
  }
});

test("agrees with @loaders.gl/las (64-bit positions) on LAS 1.2 and 1.3 files", async () => {
  for (const o of [cases[0][1], cases[1][1]]) {
    const pts = points(5000);
    const bytes = lasFile(pts, o);
    const path = resolve(dir, `cross-${o.version}.las`);
    writeFileSync(path, bytes);
    const { out } = await readAll(path, [0, 0, 0]);
    const ab = bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer;
    const mesh = (await LASLoader.parse!(ab, { las: { fp64: true }, worker: false } as never)) as unknown as { attributes: { POSITION: { value: Float64Array } } };
    const theirs = mesh.attributes.POSITION.value;
    expect(theirs.length).toBe(out.length);
    let worst = 0;
    for (let i = 0; i < out.length; i++) worst = Math.max(worst, Math.abs(theirs[i] - out[i]));
    expect(worst).toBeLessThan(1e-9);
  }
});

test("bad files get a specific error", async () => {
  const bad = resolve(dir, "bad.las");
  writeFileSync(bad, new TextEncoder().encode("E,N,H\n1,2,3\n".repeat(30)));
  await expect(readPointCloud(bad, [0, 0, 0], () => {})).rejects.toThrow(/does not start with "LASF"/);
  const full = lasFile(points(1000), cases[0][1]);
  const cut = resolve(dir, "cut.las");
  writeFileSync(cut, full.subarray(0, full.length - 500));
  await expect(readPointCloud(cut, [0, 0, 0], () => {})).rejects.toThrow(/cut short.*1000 points, it holds 982/);
  const v = Uint8Array.from(full);
  v[25] = 0;
  expect(() => parseLasHeader(v)).toThrow(LasFormatError);
  expect(() => parseLasHeader(v)).toThrow(/version 1.0/);
});

test("LAZ: laz-perf decodes the same points as the uncompressed twin (laz-perf's own test pairs)", async () => {
  const fx = resolve(process.cwd(), "tests/fixtures/laz");
  for (const [las, laz, n] of [
    ["1815.las", "1815.laz", 1247],
    ["point10.las", "point10.las.laz", 1065],
  ] as const) {
    const a = await readAll(resolve(fx, las), [2014969, 6493024, 76]);
    const b = await readAll(resolve(fx, laz), [2014969, 6493024, 76]);
    expect(a.header.compressed).toBe(false);
    expect(b.header.compressed).toBe(true);
    expect(b.out.length).toBe(3 * n);
    expect(new Set(b.out).size).toBeGreaterThan(n); // real coordinates, not a block of zeros
    expect(b.out).toEqual(a.out);
  }
});
