// QA review: the sensors overview, sign-offs (the report frozen into sign_offs.snapshot, mail
// to the crew who logged the shots and to the admins) and the failed-verdict notice to QA.
import { and, asc, desc, eq, inArray, isNull, sql } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { auditLog, checkSessions, exclusions, photos, projectMembers, projects, projectSensors, sensors, shots, signOffs, sites, stations, targets, users } from "~/db/schema";
import { buffer, convex, featureCollection, point } from "@turf/turf";
import type { Feature, Point } from "geojson";
import { audit } from "~/models/audit.server";
import { sendTemplateMail } from "~/mail/mailer.server";
import { listUserEmailsByRole } from "~/models/users.server";
import { buildSensorReport, computeSensorReport, sensorReportSummary } from "~/models/reports.server";
import { matrixCells, worstCell, type MatrixCell } from "~/contract/report-matrix";
import { explainVerdict } from "~/domain";
import type { ReportJson } from "~/contract/report";
import { accuracyStatement, verdictFailures } from "~/domain";
import type { SignOffInput } from "~/contract/signoff";
import type { Actor } from "~/models/actor";
import { canSeeProject, canSeeSensor, projectColInScope, scopeOf, sensorIdInScope, sessionIdInScope, type Scope } from "~/models/scope.server";
export type ReviewQuery = { from?: string | null; to?: string | null; sessionIds?: string[]; projectId?: string | null };

/** Who acts when the server itself asks (the notice after a sync). */
const SYSTEM: Actor = { id: "system", role: "admin", name: "Shotbook" };

export class ReviewError extends Error {
  constructor(
    message: string,
    readonly status = 400,
    readonly field?: string,
  ) {
    super(message);
  }
}

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
    throw Response.json(r.body, { status: r.status });
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
  if (q.projectId && !(await canSeeProject(scope, q.projectId, db))) throw Response.json({ error: `No project ${q.projectId}.` }, { status: 404 });
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

export type SignOffRow = {
  id: string;
  decision: "approved" | "rejected";
  verdict: "pass" | "fail" | "insufficient";
  projectId: string | null;
  projectName: string | null;
  periodFrom: string | null;
  periodTo: string | null;
  biasMm: number | null;
  note: string;
  byName: string;
  createdAt: string;
};

/** The sensor's sign-offs the actor may see: those of their projects (issue 14; no project: admins only). */
export async function listSignOffs(actor: Actor, sensorId: string, limit = 20): Promise<SignOffRow[]> {
  const scope = await scopeOf(actor);
  const rows = await getDb()
    .select({
      id: signOffs.id,
      decision: signOffs.decision,
      verdict: signOffs.verdict,
      projectId: signOffs.projectId,
      projectName: projects.name,
      periodFrom: signOffs.periodFrom,
      periodTo: signOffs.periodTo,
      biasMm: signOffs.biasMm,
      note: signOffs.note,
      byName: users.name,
      byEmail: users.email,
      createdAt: signOffs.createdAt,
    })
    .from(signOffs)
    .innerJoin(users, eq(users.id, signOffs.byUserId))
    .leftJoin(projects, eq(projects.id, signOffs.projectId))
    .where(and(eq(signOffs.sensorId, sensorId), projectColInScope(scope, signOffs.projectId)))
    .orderBy(desc(signOffs.createdAt))
    .limit(limit);
  return rows.map(({ byEmail, ...r }) => ({ ...r, byName: r.byName || byEmail }));
}

export async function getSignOff(actor: Actor, id: string) {
  const scope = await scopeOf(actor);
  const [row] = await getDb()
    .select()
    .from(signOffs)
    .where(and(eq(signOffs.id, id), projectColInScope(scope, signOffs.projectId)))
    .limit(1);
  return row ?? null;
}

/** Addresses of the active users who synced any shot of these sessions of the sensor. */
async function crewEmails(sensorId: string, sessionIds: string[]) {
  if (sessionIds.length === 0) return [];
  const db = getDb();
  const out = new Set<string>();
  for (let i = 0; i < sessionIds.length; i += 400) {
    const rows = await db
      .selectDistinct({ email: users.email })
      .from(shots)
      .innerJoin(users, eq(users.id, shots.syncedBy))
      .where(and(eq(shots.sensorId, sensorId), inArray(shots.sessionId, sessionIds.slice(i, i + 400)), eq(users.active, true)));
    rows.forEach((r) => out.add(r.email));
  }
  return [...out].sort();
}

export type SignOffResult = { id: string; verdict: ReportJson["verdict"]; recipients: string[]; mailOk: boolean };

/**
 * Approves or rejects a sensor for a project and period. The report as it stands is frozen
 * into the row; approving a sensor whose verdict is not "pass" needs a note saying why.
 */
export async function createSignOff(actor: Actor, sensorId: string, input: Omit<SignOffInput, "intent">): Promise<SignOffResult> {
  if (actor.role !== "qa" && actor.role !== "admin") throw new ReviewError("Only QA or an admin may sign a sensor off.", 403);
  const db = getDb();
  const scope = await scopeOf(actor, db);
  const [sensor] = await db.select({ id: sensors.id, label: sensors.label, serial: sensors.serial }).from(sensors).where(eq(sensors.id, sensorId)).limit(1);
  // issue 14: a sensor outside the actor's projects is "no such sensor"
  if (!sensor || !(await canSeeSensor(scope, sensorId, db))) throw new ReviewError("No such sensor.", 404);
  // issue 14: a sign-off is per project and sensor. A QA member signs off for a project they
  // belong to (implied when exactly one of theirs holds the sensor). An admin names the project
  // too whenever the sensor is in one (listed or used by its sessions): a sign-off freezes only
  // its project's shots, so "the whole history" is left for a sensor no project holds.
  let projectId = input.projectId || null;
  if (!projectId && scope.all) {
    const holding = await db
      .select({ name: projects.name })
      .from(projects)
      .where(
        sql`${projects.id} IN (SELECT ${projectSensors.projectId} FROM ${projectSensors} WHERE ${projectSensors.sensorId} = ${sensorId} UNION SELECT ${checkSessions.projectId} FROM ${checkSessions} WHERE ${checkSessions.sensorId} = ${sensorId})`,
      )
      .orderBy(asc(projects.name));
    if (holding.length) {
      throw new ReviewError(`This sensor is used by ${holding.map((p) => p.name).join(", ")}: choose the project this sign-off is for (it freezes that project's shots only).`, 400, "projectId");
    }
  }
  if (!projectId && !scope.all) {
    const mine = await db
      .select({ id: projectSensors.projectId })
      .from(projectSensors)
      .where(and(eq(projectSensors.sensorId, sensorId), projectColInScope(scope, projectSensors.projectId)));
    if (mine.length !== 1) throw new ReviewError("Choose the project this sign-off is for.", 400, "projectId");
    projectId = mine[0]!.id;
  }
  let projectName: string | null = null;
  if (projectId) {
    const [p] = await db
      .select({ name: projects.name })
      .from(projects)
      .where(and(eq(projects.id, projectId), projectColInScope(scope, projects.id)))
      .limit(1);
    if (!p) throw new ReviewError("No such project.", 400, "projectId");
    projectName = p.name;
  }
  // the shots of the sign-off's project only (ranging.md's report, for that project's sessions)
  const rc = await computeSensorReport(
    actor,
    sensorId,
    { ...(input.from ? { from: input.from } : {}), ...(input.to ? { to: input.to } : {}), ...(projectId ? { projectId } : {}) },
    projectId ? { onlyProjectIds: [projectId] } : {},
  );
  if (rc.status !== 200 && !(rc.status === 404 && rc.body.error.startsWith("No sensor"))) throw Response.json(rc.body, { status: rc.status });
  const report = rc.status === 200 ? (rc.body as unknown as ReportJson) : null;
  if (!report) throw new ReviewError("No such sensor.", 404);
  if (report.n + report.excluded === 0) throw new ReviewError("There are no shots in this selection to sign off.", 400, "from");
  const note = input.note ?? "";
  if (input.decision === "approved" && report.verdict !== "pass" && !note) {
    throw new ReviewError(`The verdict is "${report.verdict}": approving it anyway needs a note saying why.`, 400, "note");
  }
  const sessionIds = [...new Set(report.shots.map((s) => s.sessionId))].sort();
  const [row] = await db
    .insert(signOffs)
    .values({
      sensorId,
      projectId,
      decision: input.decision,
      periodFrom: input.from ?? null,
      periodTo: input.to ?? null,
      sessionIds,
      verdict: report.verdict,
      biasMm: report.biasMm,
      snapshot: report,
      note,
      byUserId: actor.id,
    })
    .returning({ id: signOffs.id });
  const id = row!.id;
  await audit(actor.id, `sign-off.${input.decision}`, "sensor", sensorId, {
    signOffId: id,
    verdict: report.verdict,
    projectId,
    from: input.from ?? null,
    to: input.to ?? null,
    n: report.n,
    biasMm: report.biasMm,
  });

  const crew = await crewEmails(sensorId, sessionIds);
  const admins = await listUserEmailsByRole(["admin"]);
  const recipients = [...new Set([...crew, ...admins])].filter((e) => e !== actor.email);
  const period = input.from || input.to ? `period ${input.from ?? "start"} to ${input.to ?? "today"}` : "all shots";
  const mail = await sendTemplateMail("sensor-signed-off", recipients, {
    sensorId,
    sensorLabel: `${sensor.label} (${sensor.serial})`,
    decision: input.decision,
    byName: actor.name || actor.email || "QA",
    // issue 15: the mail leads with the rule's accuracy statement (ranging.md §7)
    statement: accuracyStatement(report, report.statement).sentence,
    expired: expiredSummary(report),
    note: [`Verdict ${report.verdict}, ${report.n} shots, bias ${report.biasMm == null ? "—" : report.biasMm.toFixed(2)} mm; ${projectName ? `project ${projectName}, ` : ""}${period}.`, note]
      .filter(Boolean)
      .join(" "),
    reportUrl: `/review/sensors/${sensorId}`,
  });
  return { id, verdict: report.verdict, recipients, mailOk: mail.ok };
}

/** issue 15: certificates past due on some sessions of the report, as one line (or ""). */
function expiredSummary(report: ReportJson): string {
  const late = report.traceability.filter((t) => t.expiredOnSessions.length > 0);
  return late.map((t) => `${t.kind} ${t.label} certificate ${t.number ?? ""} due ${t.due} was past due on ${t.expiredOnSessions.length} session(s)`).join("; ");
}

const VERDICT_SEEN = "sensor.verdict";

/** issue 14: the active QA users who are members of a project of the sensor (listed or used). */
async function qaWhoSee(sensorId: string): Promise<string[]> {
  const qa = await listUserEmailsByRole(["qa"]);
  if (!qa.length) return [];
  const rows = await getDb()
    .selectDistinct({ email: users.email })
    .from(projectMembers)
    .innerJoin(users, eq(users.id, projectMembers.userId))
    .where(and(eq(users.role, "qa"), eq(users.active, true), sensorIdInScopeOfProject(projectMembers.projectId, sensorId)));
  const ok = new Set(rows.map((r) => r.email));
  return qa.filter((e) => ok.has(e));
}

/** The project (column) lists the sensor or has a session of it. */
function sensorIdInScopeOfProject(projectCol: typeof projectMembers.projectId, sensorId: string) {
  return sql`(${projectCol} IN (SELECT ${projectSensors.projectId} FROM ${projectSensors} WHERE ${projectSensors.sensorId} = ${sensorId}) OR ${projectCol} IN (SELECT ${checkSessions.projectId} FROM ${checkSessions} WHERE ${checkSessions.sensorId} = ${sensorId}))`;
}

/**
 * After a sync: for each sensor whose overall verdict has turned to "fail" since the last
 * time this looked, mail a "sensor-failed" notice to the QA users. The last verdict seen is
 * kept in the audit trail, so a sensor that stays failed is not announced again.
 */
export async function notifyFailedVerdicts(sensorIds: string[]): Promise<{ notified: string[] }> {
  const db = getDb();
  const notified: string[] = [];
  for (const sensorId of [...new Set(sensorIds)]) {
    const [sensor] = await db.select({ label: sensors.label, serial: sensors.serial }).from(sensors).where(eq(sensors.id, sensorId)).limit(1);
    if (!sensor) continue;
    // issue 16: the figures without rows first (sums and the error index, kept while unchanged);
    // the rows only for the mail that explains a verdict turned to fail
    const summary = await sensorReportSummary(SYSTEM, sensorId);
    if (!summary) continue;
    const [seen] = await db
      .select({ detail: auditLog.detail })
      .from(auditLog)
      .where(and(eq(auditLog.entity, "sensor"), eq(auditLog.entityId, sensorId), eq(auditLog.action, VERDICT_SEEN)))
      .orderBy(desc(auditLog.at), desc(auditLog.id))
      .limit(1);
    const before = (seen?.detail as { verdict?: string } | null)?.verdict ?? null;
    if (before === summary.verdict) continue;
    await audit(null, VERDICT_SEEN, "sensor", sensorId, { verdict: summary.verdict, from: before });
    if (summary.verdict !== "fail") continue;
    const report = await reportFor(SYSTEM, sensorId, {});
    if (!report) continue;
    const why = report.tests
      .filter((t) => verdictFailures([t], report.rule.referenceInVerdict).length > 0)
      .map((t) => `${t.name} ${t.value == null ? "—" : t.value.toFixed(2)} (limit ${t.limit.toFixed(2)})`)
      .join("; ");
    await sendTemplateMail("sensor-failed", await qaWhoSee(sensorId), {
      sensorId,
      sensorLabel: `${sensor.label} (${sensor.serial})`,
      biasMm: report.biasMm,
      rmseMm: report.rmseMm,
      withinPct: report.withinPct,
      statement: accuracyStatement(report, report.statement).sentence,
      summary: [explainVerdict({ verdict: report.verdict, tests: report.tests, shots: report.shots, coverageK: report.rule.coverageK }).flaggedLine, `Failed tests: ${why}.`]
        .filter(Boolean)
        .join("\n"),
      reportUrl: `/review/sensors/${sensorId}`,
    });
    notified.push(sensorId);
  }
  return { notified };
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
