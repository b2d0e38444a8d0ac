// POST /api/scans and POST /api/frames (api.md v1.1, ranging.md §8) end to end through the route:
// synthetic LAS files and 16-bit PNGs written from known geometry (tests/support/scan-fixtures),
// the recovered range, error and incidence compared with the analytic values to 0.2 mm.
import { beforeAll, expect, test } from "vitest";
import { createHash } from "node:crypto";
import { eq } from "drizzle-orm";
import { encode } from "fast-png";
import { getDb } from "~/db/client.server";
import { shots } from "~/db/schema";
import { action as scansAction } from "~/routes/api.scans";
import { action as framesAction } from "~/routes/api.frames";
import { action as syncAction } from "~/routes/api.sync";
import { loader as shotsLoader } from "~/routes/api.shots";
import { receiveMultipart } from "~/utils/multipart.server";
import type { ScanTargetRow as AnswerRow } from "~/contract/scan";
/** The rows these tests read are found targets: every figure is there. */
type ScanTargetRow = { [K in keyof AnswerRow]-?: NonNullable<AnswerRow[K]> };
import { apiRequest, call, makeSensor, makeSite, makeUser, type TestUser, shareProject } from "../support/registry-fixtures";
import { boardPoints, boardTruth, clutter, correlationPngs, depthPng, lasFile, planeDepth, rng, type Board, type Camera, type V3 } from "../support/scan-fixtures";
import { lazFile } from "../support/laz-writer";

let crew: TestUser;
let viewer: TestUser;
let sessionId: string;
let camSessionId: string;
let site: Awaited<ReturnType<typeof makeSite>>;
let camSite: Awaited<ReturnType<typeof makeSite>>;

// the station mark and the instrument 1.5 m above it, on a grid of hundreds of kilometres
const mark: V3 = [512_345.6789, 6_350_123.4567, 101.2345];
const IH = 1.5;
const O: V3 = [mark[0], mark[1], mark[2] + IH];
const boards: Board[] = [
  { centre: [O[0] + 24, O[1] + 7, O[2] - 0.4], offsetMm: 3.2, tiltDeg: 0, halfM: 0.2, perSide: 45, noiseMm: 1 },
  { centre: [O[0] - 41, O[1] + 52, O[2] + 1.1], offsetMm: -6.5, tiltDeg: 35, halfM: 0.2, perSide: 45, noiseMm: 2 },
  { centre: [O[0] + 80, O[1] - 95, O[2] + 3.0], offsetMm: 14, tiltDeg: 60, halfM: 0.2, perSide: 40, noiseMm: 1.5 },
];
// a fourth board with too few points, a fifth target never surveyed on the grid
const sparse: Board = { centre: [O[0] + 10, O[1] - 10, O[2]], offsetMm: 0, tiltDeg: 0, halfM: 0.2, perSide: 5, noiseMm: 1 };
let las: Uint8Array;
let laz: Uint8Array;
let laz1: Uint8Array;

beforeAll(async () => {
  [crew, viewer] = await Promise.all([makeUser("crew"), makeUser("viewer")]);
  const sensor = await makeSensor({ label: "Tripod scanner TS-4", appliesAirCorrection: true, toleranceMm: 3, tolerancePpm: 20 });
  site = await makeSite({
    name: "Fernhollow yard baseline",
    stations: [{ id: `st-${crypto.randomUUID()}`, label: "S1", grid: { e: mark[0], n: mark[1], h: mark[2] } }, { label: "S2" }],
    targets: [
      ...[...boards, sparse].map((b, i) => ({ label: `B${i + 1}`, reflectancePct: 80, grid: { e: b.centre[0], n: b.centre[1], h: b.centre[2] } })),
      { label: "B6 (no grid)", reflectancePct: 10 },
    ],
  });
  sessionId = crypto.randomUUID();
  const cam = await makeSensor({ label: "Depth camera DC-1", intrinsics: { fx: 120, fy: 121, cx: 79.5, cy: 60.2 }, depthScaleMm: 0.25, appliesAirCorrection: true });
  camSite = await makeSite({ name: "Fernhollow lab wall", targets: [{ label: "Wall board", reflectancePct: 85 }] });
  camSessionId = crypto.randomUUID();
  // issue 14: each session's sensor and site share one project of the crew's
  await shareProject([sensor], [site], [crew, viewer]);
  await shareProject([cam], [camSite], [crew, viewer], { name: "Lab workspace" });
  const s = await call(
    syncAction,
    apiRequest("/api/sync", {
      user: crew,
      json: {
        deviceId: "t",
        sessions: [
          { id: sessionId, sensorId: sensor.id, siteId: site.id, startedAt: "2026-05-08T08:00:00+02:00" },
          { id: camSessionId, sensorId: cam.id, siteId: camSite.id, startedAt: "2026-05-08T09:00:00+02:00", airTempC: 20, pressureHpa: 1013.25, humidityPct: 50 },
        ],
        shots: [],
      },
    }),
  );
  expect(s.json.results.map((r: { status: string }) => r.status)).toEqual(["accepted", "accepted"]);
  const pts = [
    ...boards.flatMap((b, i) => boardPoints(O, b, rng(10 + i))),
    ...boardPoints(O, sparse),
    ...clutter(
      O,
      [...boards, sparse].map((b) => b.centre),
      30_000,
    ),
  ];
  las = lasFile(pts, { version: 4, pointFormat: 6, offset: [512_000, 6_350_000, 100] });
  // the same points LASzip-compressed (formats 0 and 1) in chunks of a few thousand, so the reader streams
  // several chunks (tests/support/laz-writer.ts, proved against laz-perf in laz-writer.test.ts)
  laz = lazFile(pts, { offset: [512_000, 6_350_000, 100], chunkSize: 4000 });
  laz1 = lazFile(pts, { offset: [512_000, 6_350_000, 100], chunkSize: 5000, pointFormat: 1 });
});

function scanForm(fields: Record<string, string>, file?: Uint8Array, name = "scan.las") {
  const form = new FormData();
  for (const [k, v] of Object.entries(fields)) form.set(k, v);
  if (file) form.set("file", new File([file as Uint8Array<ArrayBuffer>], name, { type: "application/octet-stream" }));
  return form;
}
const postScan = (user: TestUser | undefined, form: FormData) => call(scansAction, apiRequest("/api/scans", { user, method: "POST", body: form }));

test.each([
  ["LAS 1.4", "scan.las"],
  ["LAZ (LAS 1.2 format 0, chunked)", "scan.laz"],
  ["LAZ (LAS 1.2 format 1, GPS time, chunked)", "scan-gps.laz"],
])("a scan (%s) gives one row per target: range, error and incidence match the analytic values to 0.2 mm", async (_kind, name) => {
  const file = name === "scan-gps.laz" ? laz1 : name.endsWith(".laz") ? laz : las;
  const res = await postScan(crew, scanForm({ sessionId, stationId: site.stations[0].id, instrumentHeightM: String(IH) }, file, name));
  expect(res.status).toBe(200);
  const sha = createHash("sha256").update(file).digest("hex");
  expect(res.json.fileSha256).toBe(sha);
  const rows = res.json.targets as ScanTargetRow[];
  expect(rows).toHaveLength(5);
  boards.forEach((b, i) => {
    const t = boardTruth(O, b);
    const r = rows.find((x) => x.targetId === site.targets[i].id)!;
    expect(r.status).toBe("found");
    expect(r.points).toBe(b.perSide ** 2);
    expect(Math.abs(r.rangeM - t.rangeM) * 1000).toBeLessThan(0.2);
    expect(Math.abs(r.referenceM - t.distanceM) * 1000).toBeLessThan(0.001);
    expect(Math.abs(r.errorMm - t.errorMm)).toBeLessThan(0.2);
    expect(Math.abs(r.incidenceDeg - t.incidenceDeg)).toBeLessThan(0.5);
    expect(Math.abs(r.planeRmsMm - b.noiseMm)).toBeLessThan(0.15 * b.noiseMm);
    // ranging.md §4: L = k·(a + b·D/1000) with the default k = 2
    expect(r.limitMm).toBeCloseTo(2 * (3 + (20 * t.distanceM) / 1000), 6);
    expect(r.within).toBe(Math.abs(r.errorMm) <= r.limitMm);
    expect(r.shotId).toMatch(/^[0-9a-f]{8}-[0-9a-f]{4}-8[0-9a-f]{3}-[89ab][0-9a-f]{3}-[0-9a-f]{12}$/);
    expect(r.sync).toBeUndefined();
    expect(r.plot).toBeUndefined();
  });
  expect(rows.find((x) => x.targetId === site.targets[2].id)!.within).toBe(false); // 14 mm at 125 m: over 2·(3 + 2.5)
  const few = rows.find((x) => x.targetId === site.targets[3].id)!;
  expect(few).toMatchObject({ status: "not_found", points: 25, rangeM: null, shotId: null });
  expect(few.reason).toMatch(/25 points within 0.3 m.*at least 50/);
  const noGrid = rows.find((x) => x.targetId === site.targets[4].id)!;
  expect(noGrid).toMatchObject({ status: "not_found", points: 0 });
});

test("commit stores the found targets through the sync ingest; the same file again gives duplicates", async () => {
  const fields = { sessionId, stationId: site.stations[0].id, instrumentHeightM: String(IH), commit: "true" };
  const first = await postScan(crew, scanForm(fields, las));
  expect(first.status).toBe(200);
  const found = (first.json.targets as ScanTargetRow[]).filter((r) => r.status === "found");
  expect(found.map((r) => r.sync)).toEqual(found.map(() => ({ status: "accepted", errors: [] })));
  const [row] = await getDb().select().from(shots).where(eq(shots.id, found[1].shotId));
  expect(row.errorMm).toBeCloseTo(found[1].errorMm, 9);
  expect(row.incidenceDeg).toBeCloseTo(found[1].incidenceDeg, 9);
  const raw = JSON.parse(row.raw);
  expect(raw.scan).toEqual({ points: found[1].points, planeRmsMm: found[1].planeRmsMm, incidenceDeg: found[1].incidenceDeg, fileSha256: first.json.fileSha256 });
  expect(raw.reference).toEqual({ method: "coordinates", stationId: site.stations[0].id, instrumentHeightM: IH, targetHeightM: 0 });
  const again = await postScan(crew, scanForm(fields, las, "scan-copy.las"));
  expect((again.json.targets as ScanTargetRow[]).filter((r) => r.status === "found").map((r) => r.sync.status)).toEqual(["duplicate", "duplicate", "duplicate"]);
  const count = await getDb().select().from(shots).where(eq(shots.sessionId, sessionId));
  expect(count).toHaveLength(3);
  // the shot details carry the file's hash
  const listed = await call(shotsLoader, apiRequest(`/api/shots?sessions=${sessionId}&limit=100`, { user: viewer }));
  expect(listed.json.shots.map((x: { scanSha256: string }) => x.scanSha256)).toEqual([first.json.fileSha256, first.json.fileSha256, first.json.fileSha256]);
});

test("bad scan requests: field errors, unknown session 404, not a LAS file, a station of another site, the viewer refused", async () => {
  const missing = await postScan(crew, scanForm({ sessionId: "nope", stationId: "" }));
  expect(missing.status).toBe(400);
  expect(missing.json.errors.map((e: { path: string }) => e.path).sort()).toEqual(["file", "sessionId", "stationId"]);
  const unknown = await postScan(crew, scanForm({ sessionId: crypto.randomUUID(), stationId: site.stations[0].id }, las));
  expect(unknown.status).toBe(404);
  const csv = await postScan(crew, scanForm({ sessionId, stationId: site.stations[0].id }, new TextEncoder().encode("E,N,H\n1,2,3\n".repeat(40)), "scan.csv"));
  expect(csv.status).toBe(400);
  expect(csv.json.errors).toEqual([{ path: "file", message: 'not a LAS or LAZ file (it does not start with "LASF")' }]);
  const noGrid = await postScan(crew, scanForm({ sessionId, stationId: site.stations[1].id }, las));
  expect(noGrid.status).toBe(400);
  expect(noGrid.json.errors[0]).toMatchObject({ path: "stationId" });
  const radius = await postScan(crew, scanForm({ sessionId, stationId: site.stations[0].id, searchRadiusM: "-1", minPoints: "2.5" }, las));
  expect(radius.json.errors.map((e: { path: string }) => e.path)).toEqual(["searchRadiusM", "minPoints"]);
  expect((await postScan(viewer, scanForm({ sessionId, stationId: site.stations[0].id }, las))).status).toBe(403);
  expect((await postScan(undefined, scanForm({ sessionId, stationId: site.stations[0].id }, las))).status).toBe(401);
});

test("uploads beyond the cap answer 413: by the declared length before reading, and while streaming", async () => {
  const big = apiRequest("/api/scans", { user: crew, method: "POST", body: scanForm({ sessionId, stationId: "x" }, las), headers: { "Content-Length": String(600 * 1024 * 1024) } });
  const declared = await call(scansAction, big);
  expect(declared.status).toBe(413);
  // no length given: counted as it streams (a small cap stands in for 512 MB)
  const form = scanForm({ sessionId, stationId: "x" }, las);
  const body = new Response(form);
  const streamed = new Request("http://localhost/api/scans", { method: "POST", body: body.body, headers: { "Content-Type": body.headers.get("Content-Type")! }, duplex: "half" } as RequestInit);
  const r = await receiveMultipart(streamed, { maxBytes: 100_000, maxFiles: 1 });
  expect(r).toMatchObject({ status: 413 });
});

// ---------------------------------------------------------------------------------------------
// Depth frames

const cam: Camera = { width: 160, height: 120, fx: 120, fy: 121, cx: 79.5, cy: 60.2 };
const box = { u0: 96, v0: 28, u1: 128, v1: 56 };
const boxText = `${box.u0},${box.v0},${box.u1},${box.v1}`;

function frameForm(fields: Record<string, string>, field: "depth" | "correlation", files: Uint8Array[]) {
  const form = new FormData();
  for (const [k, v] of Object.entries(fields)) form.set(k, v);
  files.forEach((f, i) => form.append(field, new File([f as Uint8Array<ArrayBuffer>], `frame-${i}.png`, { type: "image/png" })));
  return form;
}
const postFrames = (form: FormData) => call(framesAction, apiRequest("/api/frames", { user: crew, method: "POST", body: form }));

test("several depth frames: range to 0.2 mm of the analytic value, temporal noise, flying pixels", async () => {
  const R = 3.0042; // along the ray through the box centre
  const z = planeDepth(cam, box, R, 20, 6.5);
  const random = rng(21);
  const pngs = Array.from({ length: 10 }, () => depthPng(cam, z, 0.25, 1.5, random));
  const res = await postFrames(frameForm({ sessionId: camSessionId, targetId: camSite.targets[0].id, box: boxText, referenceM: "3.0000", plot: "true" }, "depth", pngs));
  expect(res.status).toBe(200);
  const [row] = res.json.targets;
  expect(row.status).toBe("found");
  expect(row.points).toBe(33 * 29);
  // the camera applies its own air correction: its ranges are used as read (ranging.md §1)
  expect(Math.abs(row.rangeM - R) * 1000).toBeLessThan(0.2);
  expect(row.errorMm).toBeCloseTo((row.rangeM - 3) * 1000, 9);
  expect(row.referenceM).toBe(3);
  expect(row.incidenceDeg).toBeGreaterThan(19.5);
  expect(row.incidenceDeg).toBeLessThan(20.5);
  // 1.5 mm per frame plus 0.25 mm quantisation: SDs over 10 frames, their median
  expect(row.temporalNoiseMm).toBeGreaterThan(1.2);
  expect(row.temporalNoiseMm).toBeLessThan(1.8);
  // only the normal tail beyond 3σ (about 0.3 %): no pixel of this synthetic board is flying
  expect(row.flyingPixels).toBeLessThan(0.01 * row.points);
  expect(row.plot.dMm.length).toBe(33 * 29);
  const sha = createHash("sha256")
    .update(pngs.map((p) => createHash("sha256").update(p).digest("hex")).join("\n"))
    .digest("hex");
  expect(res.json.fileSha256).toBe(sha);
});

test("one noiseless frame, depth quantised to 0.25 mm: agrees to 0.2 mm", async () => {
  const R = 2.2;
  const png = depthPng(cam, planeDepth(cam, box, R, 0), 0.25);
  const res = await postFrames(frameForm({ sessionId: camSessionId, targetId: camSite.targets[0].id, box: boxText, referenceM: "2.2" }, "depth", [png]));
  const [row] = res.json.targets;
  // quantised to 0.25 mm per pixel; the plane through ~950 pixels averages it out
  expect(Math.abs(row.rangeM - R) * 1000).toBeLessThan(0.2);
  expect(Math.abs(row.incidenceDeg)).toBeLessThan(0.1);
  expect(row.temporalNoiseMm).toBeNull();
  expect(row.flyingPixels).toBe(0);
});

test("correlation frames through the single-shot phase function; commit, then duplicate", async () => {
  const R = 3.5;
  const z = planeDepth(cam, box, R, 10);
  const pngs = correlationPngs(cam, z, 20e6, 4);
  const fields = { sessionId: camSessionId, targetId: camSite.targets[0].id, box: boxText, referenceM: "3.5", frequencyHz: "20000000", commit: "true" };
  const res = await postFrames(frameForm(fields, "correlation", pngs));
  expect(res.status).toBe(200);
  const [row] = res.json.targets;
  expect(row.status).toBe("found");
  // 16-bit samples with A = 4000: the phase is quantised, the plane over the box averages it
  expect(Math.abs(row.rangeM - R) * 1000).toBeLessThan(0.2);
  expect(Math.abs(row.incidenceDeg - 10)).toBeLessThan(0.1);
  expect(row.sync).toEqual({ status: "accepted", errors: [] });
  const again = await postFrames(frameForm(fields, "correlation", pngs));
  expect(again.json.targets[0].sync.status).toBe("duplicate");
});

test("bad frame requests get specific errors", async () => {
  const png8 = encode({ width: cam.width, height: cam.height, data: new Uint8Array(cam.width * cam.height), depth: 8, channels: 1 });
  const base = { sessionId: camSessionId, targetId: camSite.targets[0].id, box: boxText, referenceM: "3" };
  const eight = await postFrames(frameForm(base, "depth", [png8]));
  expect(eight.status).toBe(400);
  expect(eight.json.errors[0].message).toMatch(/8-bit PNG.*16-bit greyscale/);
  const outside = await postFrames(frameForm({ ...base, box: "150,10,170,20" }, "depth", [depthPng(cam, planeDepth(cam, box, 2, 0), 1)]));
  expect(outside.json.errors[0]).toMatchObject({ path: "box" });
  const noRef = await postFrames(frameForm({ ...base, referenceM: "" }, "depth", [depthPng(cam, planeDepth(cam, box, 2, 0), 1)]));
  expect(noRef.json.errors[0]).toMatchObject({ path: "referenceM" });
  const two = await postFrames(frameForm({ ...base, frequencyHz: "20000000" }, "correlation", correlationPngs(cam, planeDepth(cam, box, 2, 0), 20e6, 4).slice(0, 2)));
  expect(two.json.errors[0]).toMatchObject({ path: "correlation" });
  const scanner = await postFrames(frameForm({ ...base, sessionId }, "depth", [depthPng(cam, planeDepth(cam, box, 2, 0), 1)]));
  expect(scanner.json.errors[0].message).toMatch(/no intrinsics/);
});

test("POST /api/sensors keeps a depth camera's intrinsics and depth scale; bad ones are refused with their path", async () => {
  const { action: sensorsAction } = await import("~/routes/api.sensors");
  const { sensors } = await import("~/db/schema");
  const admin = await makeUser("admin");
  const body = {
    id: `fh-depth-${crypto.randomUUID().slice(0, 8)}`,
    label: "Depth camera D3",
    serial: "FH-D3-0042",
    kind: "cw",
    wavelengthNm: 850,
    modulationHz: [20_000_000],
    appliesAirCorrection: false,
    toleranceMm: 8,
    tolerancePpm: 0,
    intrinsics: { fx: 504.2, fy: 503.9, cx: 319.5, cy: 239.5 },
    depthScaleMm: 0.25,
  };
  const ok = await call(sensorsAction, apiRequest("/api/sensors", { user: admin, json: body }));
  expect(ok.status).toBe(201);
  const [row] = await getDb().select().from(sensors).where(eq(sensors.id, body.id));
  expect(row.intrinsics).toEqual(body.intrinsics);
  expect(row.depthScaleMm).toBe(0.25);
  expect((await call(sensorsAction, apiRequest("/api/sensors", { user: admin, json: body }))).status).toBe(200);
  const badBody = { ...body, id: undefined, serial: "FH-D3-0043", intrinsics: { fx: 0, fy: 500, cx: 1, cy: 1 }, depthScaleMm: -1 };
  const bad = await call(sensorsAction, apiRequest("/api/sensors", { user: admin, json: badBody }));
  expect(bad.status).toBe(400);
  expect(bad.json.errors.map((e: { path: string }) => e.path).sort()).toEqual(["depthScaleMm", "intrinsics.fx"]);
});
