// QA review screens' reads (issue 13: split out of signoffs.server.ts): the sensors overview, the
// report with the matrix cells, the sensor page's header, site map features and per-shot extras.
// Every read takes the actor and answers only within their projects (scope.server).
import { and, asc, desc, eq, inArray, isNull } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { checkSessions, exclusions, photos, projects, projectSensors, sensors, shots, signOffs, sites, stations, targets, users } from "~/db/schema";
import { buffer, convex, featureCollection, point } from "@turf/turf";
import type { Feature, Point } from "geojson";
import { buildSensorReport, computeSensorReport } from "~/models/reports.server";
import { matrixCells, worstCell, type MatrixCell } from "~/contract/report-matrix";
import { explainVerdict } from "~/domain";
import type { ReportJson } from "~/contract/report";
import { accuracyStatement, verdictFailures } from "~/domain";
import type { Actor } from "~/models/actor";
import { AppError, appErrorOf } from "~/contract/errors";
import { canSeeProject, canSeeSensor, projectColInScope, scopeOf, sensorIdInScope, sessionIdInScope, type Scope } from "~/models/scope.server";

export type ReviewQuery = { from?: string | null; to?: string | null; sessionIds?: string[]; projectId?: string | null };

/** The live projects the actor may choose from (issue 14: their own; admins all). */
export async function listProjectsForFilter(actor: Actor) {
  const scope = await scopeOf(actor);
  return getDb()
    .select({ id: projects.id, name: projects.name, client: projects.client })
    .from(projects)
    .where(and(isNull(projects.retiredAt), projectColInScope(scope, projects.id)))
    .orderBy(asc(projects.name));
}

/** The report of the contract (api.md) for a selection; null when the sensor is unknown. */
export async function reportFor(actor: Actor, sensorId: string, q: ReviewQuery): Promise<ReportJson | null> {
  return buildSensorReport(actor, sensorId, {
    ...(q.from ? { from: q.from } : {}),
    ...(q.to ? { to: q.to } : {}),
    ...(q.sessionIds?.length ? { sessionIds: q.sessionIds } : {}),
    ...(q.projectId ? { projectId: q.projectId } : {}),
  });
}

export type SensorOverviewRow = {
  id: string;
  label: string;
  serial: string;
  kind: "pulsed" | "cw";
  toleranceMm: number;
  tolerancePpm: number;
  calibrationDue: string | null;
  verdict: ReportJson["verdict"];
  failed: string[];
  n: number;
  excluded: number;
  biasMm: number | null;
  rmseMm: number | null;
  lastShotAt: string | null;
  trace: { startedAt: string; biasMm: number | null; flag: boolean }[];
  lastSignOff: { decision: "approved" | "rejected"; createdAt: string; byName: string } | null;
  /** Where it goes wrong most: the reflectance × illuminance cell with the largest |bias|. */
  worst: MatrixCell | null;
  /** issue 15: what the overview leads with, in the rule's statement style (ranging.md §7). */
  headlineMm: number | null;
  headlineLabel: string;
  statement: "rmse" | "nssda95";
  /** Certificates past due on some session of the selection. */
  expiredCertificates: number;
  /** Flagged shots (wrap, outlier) that drive a failed test, said before any band explanation. */
  why: string | null;
};

/** The report with the per-shot reflectance and illuminance the matrix needs. */
export async function reportWithCells(actor: Actor, sensorId: string, q: ReviewQuery) {
  const r = await computeSensorReport(
    actor,
    sensorId,
    {
      ...(q.from ? { from: q.from } : {}),
      ...(q.to ? { to: q.to } : {}),
      ...(q.sessionIds?.length ? { sessionIds: q.sessionIds } : {}),
      ...(q.projectId ? { projectId: q.projectId } : {}),
    },
    { details: true },
  );
  if (r.status !== 200) {
    if (r.status === 404 && r.body.error.startsWith("No sensor")) return null;
    throw appErrorOf(r);
  }
  const details = new Map(
    r.details.map((d) => [
      d.id,
      { id: d.id, reflectancePct: d.reflectancePct, retro: d.retro, illuminanceKlux: d.illuminanceKlux, targetLabel: null, photoIds: [], exclusionReason: null, note: null },
    ]),
  );
  return { report: r.body as unknown as ReportJson, cells: matrixCells(r.body.shots, details) };
}

export async function reviewOverview(actor: Actor, q: ReviewQuery): Promise<SensorOverviewRow[]> {
  const db = getDb();
  // issue 14: the sensors of the reader's projects; a project filter outside them answers as unknown
  const scope = await scopeOf(actor, db);
  if (q.projectId && !(await canSeeProject(scope, q.projectId, db))) throw new AppError(404, `No project ${q.projectId}.`);
  let list = await db
    .select({
      id: sensors.id,
      label: sensors.label,
      serial: sensors.serial,
      kind: sensors.kind,
      toleranceMm: sensors.toleranceMm,
      tolerancePpm: sensors.tolerancePpm,
      calibrationDue: sensors.calibrationDue,
    })
    .from(sensors)
    .where(and(isNull(sensors.retiredAt), sensorIdInScope(scope, sensors.id)))
    .orderBy(asc(sensors.label));
  if (q.projectId) {
    const linked = await db.select({ id: projectSensors.sensorId }).from(projectSensors).where(eq(projectSensors.projectId, q.projectId));
    const used = await db.selectDistinct({ id: checkSessions.sensorId }).from(checkSessions).where(eq(checkSessions.projectId, q.projectId));
    const keep = new Set([...linked, ...used].map((r) => r.id));
    list = list.filter((s) => keep.has(s.id));
  }
  const out: SensorOverviewRow[] = [];
  for (const s of list) {
    const rc = await reportWithCells(actor, s.id, q);
    const r = rc?.report ?? null;
    const last = await lastSignOff(s.id, q.projectId ?? null, scope);
    const times = r?.shots.map((x) => x.takenAt).sort() ?? [];
    out.push({
      ...s,
      verdict: r?.verdict ?? "insufficient",
      failed: r ? verdictFailures(r.tests, r.rule.referenceInVerdict) : ["count"],
      n: r?.n ?? 0,
      excluded: r?.excluded ?? 0,
      biasMm: r?.biasMm ?? null,
      rmseMm: r?.rmseMm ?? null,
      lastShotAt: times.length ? times[times.length - 1]! : null,
      trace: (r?.drift ?? []).map((d) => ({ startedAt: d.startedAt, biasMm: d.biasMm, flag: d.flag })),
      lastSignOff: last,
      worst: r && r.verdict !== "pass" && rc ? worstCell(rc.cells) : null,
      ...(() => {
        const st = accuracyStatement(r ?? { n: 0, rmseMm: null, rmseCombinedMm: null, accuracy95Mm: null, referenceUnknownN: 0 }, r?.statement ?? "rmse");
        return { headlineMm: st.headlineMm, headlineLabel: st.headlineLabel, statement: st.style };
      })(),
      expiredCertificates: r ? r.traceability.filter((t) => t.expiredOnSessions.length > 0).length : 0,
      why: r ? explainVerdict({ verdict: r.verdict, tests: r.tests, shots: r.shots, coverageK: r.rule.coverageK }).flaggedLine : null,
    });
  }
  // Failing sensors first: the QA lead's first question.
  const rank = { fail: 0, insufficient: 1, pass: 2 } as const;
  return out.sort((a, b) => rank[a.verdict] - rank[b.verdict] || a.label.localeCompare(b.label));
}

async function lastSignOff(sensorId: string, projectId: string | null, scope: Scope) {
  const [row] = await getDb()
    .select({ decision: signOffs.decision, createdAt: signOffs.createdAt, byName: users.name, byEmail: users.email })
    .from(signOffs)
    .innerJoin(users, eq(users.id, signOffs.byUserId))
    .where(and(eq(signOffs.sensorId, sensorId), projectId ? eq(signOffs.projectId, projectId) : undefined, projectColInScope(scope, signOffs.projectId)))
    .orderBy(desc(signOffs.createdAt))
    .limit(1);
  return row ? { decision: row.decision, createdAt: row.createdAt, byName: row.byName || row.byEmail } : null;
}
/** What the report page shows around the client-fetched report. */
export async function sensorReviewHeader(actor: Actor, sensorId: string) {
  const db = getDb();
  // issue 14: outside the reader's projects the sensor is not there
  const scope = await scopeOf(actor, db);
  if (!(await canSeeSensor(scope, sensorId, db))) return null;
  const [sensor] = await db
    .select({
      id: sensors.id,
      label: sensors.label,
      serial: sensors.serial,
      kind: sensors.kind,
      wavelengthNm: sensors.wavelengthNm,
      toleranceMm: sensors.toleranceMm,
      tolerancePpm: sensors.tolerancePpm,
      calibrationDue: sensors.calibrationDue,
      outdoor: sensors.outdoor,
      laserClass: sensors.laserClass, // issue 15
    })
    .from(sensors)
    .where(eq(sensors.id, sensorId))
    .limit(1);
  if (!sensor) return null;
  const sessions = await db
    .select({ id: checkSessions.id, startedAt: checkSessions.startedAt, siteId: checkSessions.siteId, siteName: sites.name, projectId: checkSessions.projectId, note: checkSessions.note })
    .from(checkSessions)
    .innerJoin(sites, eq(sites.id, checkSessions.siteId))
    .where(and(eq(checkSessions.sensorId, sensorId), projectColInScope(scope, checkSessions.projectId)))
    .orderBy(asc(checkSessions.startedAt));
  return { sensor, sessions };
}

/**
 * The sites where this sensor was checked, as GeoJSON for the map: stations and targets with
 * geographic positions, and an outline (the convex hull of them, 10 m around).
 */
export async function reviewSiteFeatures(actor: Actor, sensorId: string) {
  const db = getDb();
  // issue 14: the sites of the sessions of the reader's projects
  const scope = await scopeOf(actor, db);
  const siteRows = await db
    .selectDistinct({ id: sites.id, name: sites.name, lat: sites.lat, lon: sites.lon })
    .from(checkSessions)
    .innerJoin(sites, eq(sites.id, checkSessions.siteId))
    .where(and(eq(checkSessions.sensorId, sensorId), projectColInScope(scope, checkSessions.projectId)));
  const siteIds = siteRows.map((s) => s.id);
  const [st, tg] = siteIds.length
    ? await Promise.all([
        db.select({ id: stations.id, siteId: stations.siteId, label: stations.label, lat: stations.lat, lon: stations.lon }).from(stations).where(inArray(stations.siteId, siteIds)),
        db
          .select({ id: targets.id, siteId: targets.siteId, label: targets.label, lat: targets.lat, lon: targets.lon, reflectancePct: targets.reflectancePct, referenceM: targets.referenceM })
          .from(targets)
          .where(inArray(targets.siteId, siteIds)),
      ])
    : [[], []];
  const pointFeature = (kind: "station" | "target", r: { id: string; siteId: string; label: string; lat: number | null; lon: number | null }, extra: Record<string, unknown> = {}) =>
    r.lat != null && r.lon != null ? [point([r.lon, r.lat], { kind, id: r.id, siteId: r.siteId, label: r.label, ...extra })] : [];
  const stationFc = featureCollection(st.flatMap((r) => pointFeature("station", r)));
  const targetFc = featureCollection(tg.flatMap((r) => pointFeature("target", r, { reflectancePct: r.reflectancePct, referenceM: r.referenceM })));
  const outlines = siteRows.flatMap((s) => {
    const pts: Feature<Point>[] = [...stationFc.features, ...targetFc.features].filter((f) => f.properties!.siteId === s.id);
    if (s.lat != null && s.lon != null) pts.push(point([s.lon, s.lat], { kind: "site", id: s.id, siteId: s.id, label: s.name }));
    if (pts.length === 0) return [];
    const hull = pts.length >= 3 ? convex(featureCollection(pts)) : null;
    const shape = buffer(hull ?? featureCollection(pts), 10, { units: "meters" });
    const geom = shape && "features" in shape ? shape.features[0] : shape;
    return geom ? [{ ...geom, properties: { kind: "site", id: s.id, name: s.name } }] : [];
  });
  return { sites: siteRows, outline: featureCollection(outlines), stations: stationFc, targets: targetFc };
}

/** Per shot of a sensor: its photo ids, the labels of its targets and open exclusion reasons. */
export async function shotExtras(actor: Actor, sensorId: string) {
  const db = getDb();
  // issue 14: the shots of sessions of the reader's projects
  const scope = await scopeOf(actor, db);
  const mine = (col: typeof shots.sessionId) => sessionIdInScope(scope, col);
  const [photoRows, targetRows, reasonRows] = await Promise.all([
    db
      .select({ id: photos.id, shotId: photos.shotId })
      .from(photos)
      .innerJoin(shots, eq(shots.id, photos.shotId))
      .where(and(eq(shots.sensorId, sensorId), mine(shots.sessionId)))
      .orderBy(asc(photos.createdAt)),
    db
      .selectDistinct({ id: targets.id, label: targets.label })
      .from(shots)
      .innerJoin(targets, eq(targets.id, shots.targetId))
      .where(and(eq(shots.sensorId, sensorId), mine(shots.sessionId))),
    db
      .select({ shotId: exclusions.shotId, reason: exclusions.reason })
      .from(exclusions)
      .innerJoin(shots, eq(shots.id, exclusions.shotId))
      .where(and(eq(shots.sensorId, sensorId), isNull(exclusions.restoredAt), mine(shots.sessionId))),
  ]);
  const photoMap: Record<string, string[]> = {};
  for (const p of photoRows) (photoMap[p.shotId] ??= []).push(p.id);
  return {
    photos: photoMap,
    targets: Object.fromEntries(targetRows.map((t) => [t.id, t.label])),
    reasons: Object.fromEntries(reasonRows.map((r) => [r.shotId, r.reason])),
  };
}
