// Check-shots from a point cloud (POST /api/scans) or from depth frames (POST /api/frames),
// ranging.md §8 and api.md v1.1. The files are already on disk (streamed there by the route);
// this reads them, finds the targets, and builds shot records that go through the very ingest
// the tablet's sync uses (sync.server.ts), so every stored figure is computed the same way.
// Shot ids come from the file's SHA-256 and the target id: importing the same file again gives
// `duplicate` for every shot, never a second copy.
import { createHash } from "node:crypto";
import { readFile } from "node:fs/promises";
import { and, desc, eq, isNull } from "drizzle-orm";
import { decode } from "fast-png";
import { getDb, type Db } from "~/db/client.server";
import { checkSessions, sensors, sites, stations, targets } from "~/db/schema";
import { depthFrameFromRaw, depthFromCorrelation, DomainError, frameTarget, ScanExtractor, type DepthFrame, type Intrinsics } from "~/domain";
import { readPointCloud } from "~/scan/point-cloud.server";
import { LasFormatError } from "~/scan/las";
import { loadRegistryContext, type RegistryContext, type SessionFacts } from "./registry-context.server";
import { computeShotRecord } from "./shot-record";
import { ingestSync } from "./sync.server";
import type { Actor } from "./actor";
import { projectColInScope, scopeOf, siteIdInScope, type Scope } from "./scope.server";
import { frameFieldsSchema, scanFieldsSchema, type ScanAnswer, type ScanTargetRow } from "./scan-schemas";
import { issuesToErrors, type RecordError, type SyncResult, type SyncShot } from "~/contract/sync";
import type { UploadedFile } from "~/utils/multipart.server";

type Answer = { status: number; body: unknown };
const bad = (errors: RecordError[], error = "Nothing was imported: fix the fields named below.") => ({ status: 400, body: { error, errors } });

/** The device id stored with shots made here (the sync answer's deviceId). */
export const SCAN_DEVICE_ID = "shotbook-scan-import";

/**
 * A UUID (RFC 9562 version 8, SHA-256 name-based) from the file's hash and the target id: the
 * same file and target always give the same shot id.
 */
export function scanShotId(fileSha256: string, targetId: string): string {
  const h = createHash("sha256").update(`shotbook-scan\u0000${fileSha256}\u0000${targetId}`).digest();
  h[6] = (h[6] & 0x0f) | 0x80;
  h[8] = (h[8] & 0x3f) | 0x80;
  const x = h.subarray(0, 16).toString("hex");
  return `${x.slice(0, 8)}-${x.slice(8, 12)}-${x.slice(12, 16)}-${x.slice(16, 20)}-${x.slice(20, 32)}`;
}

type SessionRow = { id: string; sensorId: string; siteId: string; projectId: string | null; startedAt: string; airTempC: number | null; pressureHpa: number | null; humidityPct: number | null };

/** The stored session; null when unknown or (issue 14) outside the actor's projects — the same 404. */
async function loadSession(sessionId: string, scope: Scope, db: Db) {
  const [s] = await db
    .select({
      id: checkSessions.id,
      sensorId: checkSessions.sensorId,
      siteId: checkSessions.siteId,
      projectId: checkSessions.projectId,
      startedAt: checkSessions.startedAt,
      airTempC: checkSessions.airTempC,
      pressureHpa: checkSessions.pressureHpa,
      humidityPct: checkSessions.humidityPct,
    })
    .from(checkSessions)
    .where(and(eq(checkSessions.id, sessionId), projectColInScope(scope, checkSessions.projectId)));
  return (s as SessionRow | undefined) ?? null;
}

const factsOf = (s: SessionRow): SessionFacts => ({
  id: s.id,
  sensorId: s.sensorId,
  siteId: s.siteId,
  projectId: s.projectId,
  air: { airTempC: s.airTempC, pressureHpa: s.pressureHpa, humidityPct: s.humidityPct },
});

async function siteTargets(siteId: string, db: Db) {
  return db
    .select({ id: targets.id, label: targets.label, reflectancePct: targets.reflectancePct, gridE: targets.gridE, gridN: targets.gridN, gridH: targets.gridH })
    .from(targets)
    .where(and(eq(targets.siteId, siteId), isNull(targets.retiredAt)))
    .orderBy(targets.label);
}

/** The figures of a shot as the ingest will compute them, for the preview. */
function preview(shot: SyncShot, session: SessionFacts, ctx: RegistryContext) {
  const out = computeShotRecord(shot, session, ctx);
  if (!out.ok) return { figures: null, errors: out.errors };
  const c = out.columns;
  return { figures: { rangeM: c.rangeM, referenceM: c.referenceM, errorMm: c.errorMm, limitMm: c.limitMm, within: c.within }, errors: null };
}

/** Stores the shots through the sync ingest and writes each one's outcome on its row. */
async function commitRows(actor: Actor, rows: ScanTargetRow[], shots: Map<string, SyncShot>, db: Db): Promise<Answer | null> {
  const list = rows.flatMap((r) => (r.shotId && shots.has(r.shotId) ? [shots.get(r.shotId)!] : []));
  if (!list.length) return null;
  const res = await ingestSync(actor, { deviceId: SCAN_DEVICE_ID, sessions: [], shots: list }, db);
  if (res.status !== 200) return { status: res.status, body: res.body };
  const byId = new Map((res.body as { results: SyncResult[] }).results.filter((r) => r.kind === "shot").map((r) => [r.id, r]));
  for (const r of rows) {
    const s = r.shotId ? byId.get(r.shotId) : undefined;
    if (s) r.sync = { status: s.status, errors: s.errors ?? [] };
  }
  return null;
}

// ---------------------------------------------------------------------------------------------
// Point clouds

export async function importScan(actor: Actor, fields: Record<string, string | undefined>, file: UploadedFile | undefined, db: Db = getDb()): Promise<Answer> {
  const parsed = scanFieldsSchema.safeParse(fields);
  const errors: RecordError[] = parsed.success ? [] : issuesToErrors(parsed.error.issues);
  if (!file) errors.push({ path: "file", message: "attach the scan as a LAS or LAZ file" });
  else if (file.bytes === 0) errors.push({ path: "file", message: "the file is empty" });
  if (!parsed.success || errors.length) return bad(errors);
  const f = parsed.data;
  const session = await loadSession(f.sessionId, await scopeOf(actor, db), db);
  if (!session) return { status: 404, body: { error: `No synced session ${f.sessionId}: sync the session first.` } };
  const facts = factsOf(session);
  const ctx = await loadRegistryContext({ sensorIds: [], siteIds: [], tapeIds: [], projectIds: [], sessionIds: [session.id] }, db);
  const station = ctx.stations.get(f.stationId);
  if (!station || station.siteId !== session.siteId) return bad([{ path: "stationId", message: `station ${f.stationId} is not a station of the session's site` }]);
  const grid = station.position.grid;
  if (!grid) return bad([{ path: "stationId", message: "the station has no grid coordinates (E, N, H); a scan is placed on the site's grid from them" }]);
  // LAS x, y, z are the site grid's easting, northing and height (ranging.md §8)
  const O: [number, number, number] = [grid.e, grid.n, grid.h + f.instrumentHeightM];
  const tRows = await siteTargets(session.siteId, db);
  const ex = new ScanExtractor(
    tRows.map((t) => ({ id: t.id, t: t.gridE != null && t.gridN != null && t.gridH != null ? [t.gridE - O[0], t.gridN - O[1], t.gridH - O[2]] : null })),
    f.searchRadiusM,
    f.minPoints,
  );
  try {
    await readPointCloud(file!.path, O, (xyz, n, seen) => ex.add(xyz, n, seen), { near: ex.boxes() });
  } catch (e) {
    if (e instanceof LasFormatError) return bad([{ path: "file", message: e.message }], "The file cannot be read as a point cloud; nothing was imported.");
    throw e;
  }
  const sha = file!.sha256;
  const shots = new Map<string, SyncShot>();
  const rows: ScanTargetRow[] = ex.results().map((r, i) => {
    const t = tRows[i];
    const row: ScanTargetRow = {
      targetId: r.targetId,
      label: t.label,
      status: r.status,
      reason: r.reason,
      points: r.points,
      planeRmsMm: r.planeRmsMm,
      incidenceDeg: r.incidenceDeg,
      rangeM: null,
      referenceM: r.distanceM,
      errorMm: null,
      limitMm: null,
      within: null,
      shotId: null,
    };
    if (f.plot) row.plot = r.plot;
    if (r.status !== "found") return row;
    const shot: SyncShot = {
      id: scanShotId(sha, r.targetId),
      sessionId: session.id,
      // the scan belongs to the session: its start time keeps the record the same on every import
      takenAt: session.startedAt,
      targetId: r.targetId,
      reference: { method: "coordinates", stationId: f.stationId, instrumentHeightM: f.instrumentHeightM, targetHeightM: 0 },
      readings: { rangesM: [r.rangeM!] },
      reflectancePct: t.reflectancePct,
      illuminanceKlux: null,
      incidenceDeg: Math.min(90, r.incidenceDeg!),
      scan: { points: r.points, planeRmsMm: r.planeRmsMm!, incidenceDeg: Math.min(90, r.incidenceDeg!), fileSha256: sha },
    };
    row.shotId = shot.id;
    const p = preview(shot, facts, ctx);
    if (p.figures) Object.assign(row, p.figures);
    else row.errors = p.errors!;
    shots.set(shot.id, shot);
    return row;
  });
  if (f.commit) {
    const failed = await commitRows(actor, rows, shots, db);
    if (failed) return failed;
  }
  const body: ScanAnswer = { fileSha256: sha, targets: rows };
  return { status: 200, body };
}

// ---------------------------------------------------------------------------------------------
// Depth frames

async function readGreyPng(file: UploadedFile, path: string): Promise<{ width: number; height: number; data: Uint16Array } | RecordError> {
  let img;
  try {
    img = decode(await readFile(file.path));
  } catch (e) {
    return { path, message: `${file.filename || "the file"} is not a readable PNG (${e instanceof Error ? e.message : String(e)})` };
  }
  if (img.depth !== 16 || img.channels !== 1) {
    return {
      path,
      message: `${file.filename || "the file"} is a ${img.depth}-bit PNG with ${img.channels} channel${img.channels === 1 ? "" : "s"}; depth and correlation frames are 16-bit greyscale`,
    };
  }
  return { width: img.width, height: img.height, data: img.data as Uint16Array };
}

export async function importFrames(actor: Actor, fields: Record<string, string | undefined>, files: UploadedFile[], db: Db = getDb()): Promise<Answer> {
  const parsed = frameFieldsSchema.safeParse(fields);
  const errors: RecordError[] = parsed.success ? [] : issuesToErrors(parsed.error.issues);
  const depth = files.filter((x) => x.field === "depth");
  const corr = files.filter((x) => x.field === "correlation");
  if (depth.length && corr.length) errors.push({ path: "depth", message: "send depth frames or correlation frames, not both" });
  if (!depth.length && !corr.length) errors.push({ path: "depth", message: "attach one or more depth PNGs, or N ≥ 3 correlation PNGs" });
  if (corr.length && corr.length < 3) errors.push({ path: "correlation", message: `at least 3 correlation frames are needed (got ${corr.length})` });
  if (corr.length && parsed.success && parsed.data.frequencyHz === undefined) errors.push({ path: "frequencyHz", message: "correlation frames need their modulation frequency (Hz)" });
  if (!parsed.success || errors.length) return bad(errors);
  const f = parsed.data;
  const session = await loadSession(f.sessionId, await scopeOf(actor, db), db);
  if (!session) return { status: 404, body: { error: `No synced session ${f.sessionId}: sync the session first.` } };
  const [sensor] = await db.select().from(sensors).where(eq(sensors.id, session.sensorId));
  const intrinsics = sensor?.intrinsics as Intrinsics | null;
  if (!sensor || !intrinsics) return bad([{ path: "sessionId", message: `the session's sensor has no intrinsics (fx, fy, cx, cy) on its registry page; an admin adds them first` }]);
  if (depth.length && !(sensor.depthScaleMm && sensor.depthScaleMm > 0)) {
    return bad([{ path: "sessionId", message: "the session's sensor has no depth scale (mm per unit) on its registry page; an admin adds it first" }]);
  }
  const tRows = await siteTargets(session.siteId, db);
  const target = tRows.find((t) => t.id === f.targetId);
  if (!target) return bad([{ path: "targetId", message: `target ${f.targetId} is not a target of the session's site` }]);

  const used = depth.length ? depth : corr;
  const field = depth.length ? "depth" : "correlation";
  const images = [];
  for (let k = 0; k < used.length; k++) {
    const img = await readGreyPng(used[k], `${field}.${k}`);
    if ("message" in img) return bad([img]);
    if (images.length && (img.width !== images[0].width || img.height !== images[0].height)) {
      return bad([{ path: `${field}.${k}`, message: `frame ${k} is ${img.width}×${img.height}, not ${images[0].width}×${images[0].height} like the first` }]);
    }
    images.push(img);
  }
  const { width, height } = images[0];
  let result;
  try {
    let frames: DepthFrame[];
    if (depth.length) {
      frames = images.map((img) => depthFrameFromRaw(img.data, width, height, sensor.depthScaleMm!));
    } else {
      // ranges in the sensor's own convention (its assumed refractivity), so the reported-range rules of §1 then apply
      const n = 1 + (sensor.assumedRefractivity ?? 0) * 1e-6;
      frames = [
        depthFromCorrelation(
          images.map((i) => i.data),
          width,
          height,
          f.frequencyHz!,
          intrinsics,
          { n, minAmplitude: f.minAmplitude },
        ),
      ];
    }
    result = frameTarget(frames, f.box, intrinsics, f.minPoints);
  } catch (e) {
    if (e instanceof DomainError) return bad([{ path: e.path, message: e.message }]);
    throw e;
  }
  // one file: its own hash; several: the hash of their hashes in upload order
  const sha =
    used.length === 1
      ? used[0].sha256
      : createHash("sha256")
          .update(used.map((u) => u.sha256).join("\n"))
          .digest("hex");
  const ctx = await loadRegistryContext({ sensorIds: [], siteIds: [], tapeIds: f.reference?.method === "tape" ? [f.reference.tape.tapeId] : [], projectIds: [], sessionIds: [session.id] }, db);
  const facts = factsOf(session);
  const row: ScanTargetRow = {
    targetId: target.id,
    label: target.label,
    status: result.status,
    reason: result.reason,
    points: result.points,
    planeRmsMm: result.planeRmsMm,
    incidenceDeg: result.incidenceDeg,
    rangeM: null,
    referenceM: null,
    errorMm: null,
    limitMm: null,
    within: null,
    shotId: null,
    temporalNoiseMm: result.temporalNoiseMm,
    flyingPixels: result.flyingPixels,
  };
  if (f.plot) row.plot = result.plot;
  const shots = new Map<string, SyncShot>();
  if (result.status === "found") {
    const shot: SyncShot = {
      id: scanShotId(sha, target.id),
      sessionId: session.id,
      takenAt: session.startedAt,
      targetId: target.id,
      reference: f.reference ?? { method: "edm", distanceM: f.referenceM! },
      readings: { rangesM: [result.rangeM!] },
      reflectancePct: target.reflectancePct,
      illuminanceKlux: null,
      incidenceDeg: Math.min(90, result.incidenceDeg!),
      scan: { points: result.points, planeRmsMm: result.planeRmsMm!, incidenceDeg: Math.min(90, result.incidenceDeg!), fileSha256: sha },
    };
    row.shotId = shot.id;
    const p = preview(shot, facts, ctx);
    if (p.figures) Object.assign(row, p.figures);
    else row.errors = p.errors!;
    shots.set(shot.id, shot);
  }
  if (f.commit) {
    const failed = await commitRows(actor, [row], shots, db);
    if (failed) return failed;
  }
  const body: ScanAnswer = { fileSha256: sha, targets: [row] };
  return { status: 200, body };
}

// ---------------------------------------------------------------------------------------------
// What the import screens offer: synced sessions (newest first) with their sensor and site, the
// site's stations and targets, and which sensors are depth cameras.

export async function scanImportContext(actor: Actor, db: Db = getDb()) {
  // issue 14: only the sessions of the actor's projects
  const scope = await scopeOf(actor, db);
  const [sessionRows, stationRows, targetRows] = await Promise.all([
    db
      .select({
        id: checkSessions.id,
        startedAt: checkSessions.startedAt,
        siteId: checkSessions.siteId,
        sensorId: checkSessions.sensorId,
        sensorLabel: sensors.label,
        siteName: sites.name,
        intrinsics: sensors.intrinsics,
        depthScaleMm: sensors.depthScaleMm,
        assumedRefractivity: sensors.assumedRefractivity,
      })
      .from(checkSessions)
      .innerJoin(sensors, eq(sensors.id, checkSessions.sensorId))
      .innerJoin(sites, eq(sites.id, checkSessions.siteId))
      .where(projectColInScope(scope, checkSessions.projectId))
      .orderBy(desc(checkSessions.startedAt))
      .limit(300),
    db
      .select({ id: stations.id, siteId: stations.siteId, label: stations.label, gridE: stations.gridE })
      .from(stations)
      .where(and(isNull(stations.retiredAt), siteIdInScope(scope, stations.siteId)))
      .orderBy(stations.label),
    db
      .select({ id: targets.id, siteId: targets.siteId, label: targets.label, gridE: targets.gridE, reflectancePct: targets.reflectancePct, referenceM: targets.referenceM })
      .from(targets)
      .where(and(isNull(targets.retiredAt), siteIdInScope(scope, targets.siteId)))
      .orderBy(targets.label),
  ]);
  return {
    sessions: sessionRows,
    stations: stationRows.map(({ gridE, ...s }) => ({ ...s, hasGrid: gridE != null })),
    targets: targetRows.map(({ gridE, ...t }) => ({ ...t, hasGrid: gridE != null })),
  };
}
