// The content of the project verification report (issue 14): every figure and fact the document
// says, in a fixed order, from the records — the per-sensor figures through the sensor report of
// reports.server, judged by the project's rule over the project's own sessions. Storing, hashing
// and versioning it is project-report.server.ts (issue 13: split out of it).

import { eq, inArray, sql } from "drizzle-orm";
import { getDb, type Db } from "~/db/client.server";
import { checkSessions, exclusions, photos, projectSensors, projectSites, sensors, shots, signOffs, sites, users } from "~/db/schema";
import { accuracyStatement, explainVerdict, PROJECT_REPORT_FORMAT, type ProjectReportContent, type ProjectReportSensor, type ProjectSensorFigures } from "~/domain";
import type { Actor } from "./actor";
import { computeSensorReport } from "./reports.server";
import type { ProjectRow } from "./project-report.server";
import { createHash } from "node:crypto";
import canonicalize from "canonicalize";

export function sha256Hex(text: string): string {
  return createHash("sha256").update(text, "utf8").digest("hex");
}

/** RFC 8785 (JSON Canonicalization Scheme): one text per content, whatever the key order. */
export function canonicalText(content: unknown): string {
  const t = canonicalize(content);
  if (t === undefined) throw new Error("The report content cannot be written as JSON.");
  return t;
}

export const who = (name: string | null, email: string | null) => (name && name.trim() ? name : (email ?? "unknown"));
const byInstant = (a: string, b: string) => Date.parse(a) - Date.parse(b) || (a < b ? -1 : a > b ? 1 : 0);

/** The sensor's report on the project's sessions, judged by the project's rule, without its per-shot rows. */
async function sensorFigures(actor: Actor, sensorId: string, projectId: string, sessionIds: string[], db: Db) {
  const r = await computeSensorReport(actor, sensorId, { projectId, sessionIds }, {}, db);
  if (r.status !== 200) throw new Error(`The report of sensor ${sensorId} on project ${projectId} failed: ${r.body.error}`);
  const b = r.body;
  const figures: ProjectSensorFigures = {
    n: b.n,
    excluded: b.excluded,
    biasMm: b.biasMm,
    biasCi95Mm: b.biasCi95Mm ? ([b.biasCi95Mm[0], b.biasCi95Mm[1]] as [number, number]) : null,
    sdMm: b.sdMm,
    rmseMm: b.rmseMm,
    accuracy95Mm: b.accuracy95Mm,
    p95AbsMm: b.p95AbsMm,
    maxAbsMm: b.maxAbsMm,
    withinPct: b.withinPct,
    zeroOffsetMm: b.zeroOffsetMm,
    zeroOffsetSeMm: b.zeroOffsetSeMm,
    zeroOffsetT: b.zeroOffsetT,
    zeroOffsetSignificant: b.zeroOffsetSignificant,
    scalePpm: b.scalePpm,
    scaleSePpm: b.scaleSePpm,
    rSquared: b.rSquared,
    referenceRmseMm: b.referenceRmseMm,
    referenceUnknownN: b.referenceUnknownN,
    rmseCombinedMm: b.rmseCombinedMm,
    statement: b.statement,
    tests: b.tests.map((t) => ({ ...t })),
    verdict: b.verdict,
    byReflectance: b.byReflectance.map((x) => ({ ...x })),
    byIlluminance: b.byIlluminance.map((x) => ({ ...x })),
    byRange: b.byRange.map((x) => ({ ...x })),
    coverage: { complete: b.coverage.complete, needsBrightSun: b.coverage.needsBrightSun, missing: b.coverage.missing.map((m) => ({ ...m })) },
    drift: b.drift.map((d) => ({ ...d })),
    airDefaulted: [...b.airDefaulted],
    traceability: b.traceability.map((t) => ({ ...t, expiredOnSessions: [...t.expiredOnSessions] })),
  };
  const why = explainVerdict({ verdict: b.verdict, tests: b.tests, shots: b.shots, coverageK: b.rule.coverageK }).lines;
  const rows = b.shots.map((s) => [s.id, s.takenAt, s.referenceM, s.rangeM, s.errorMm, s.limitMm, s.within, s.excluded, [...s.flags]]);
  return { ...figures, why, shotsSha256: sha256Hex(canonicalText(rows)) };
}

/** Everything the document says, in a fixed order (the hash depends on nothing else: no "generated at"). */
export async function buildProjectReportContent(actor: Actor, project: ProjectRow, db: Db = getDb()): Promise<ProjectReportContent> {
  const pid = project.id;
  const [linkedSensors, linkedSites, sessionRows, shotCounts, exclusionRows, signOffRows, photoCount] = await Promise.all([
    db.select({ id: projectSensors.sensorId }).from(projectSensors).where(eq(projectSensors.projectId, pid)),
    db.select({ id: projectSites.siteId }).from(projectSites).where(eq(projectSites.projectId, pid)),
    db
      .select({
        id: checkSessions.id,
        sensorId: checkSessions.sensorId,
        siteId: checkSessions.siteId,
        startedAt: checkSessions.startedAt,
        airTempC: checkSessions.airTempC,
        pressureHpa: checkSessions.pressureHpa,
        humidityPct: checkSessions.humidityPct,
        crewName: users.name,
        crewEmail: users.email,
      })
      .from(checkSessions)
      .leftJoin(users, eq(users.id, checkSessions.syncedBy))
      .where(eq(checkSessions.projectId, pid)),
    db
      .select({ sessionId: shots.sessionId, n: sql<number>`count(*)`, excluded: sql<number>`sum(${shots.excluded})` })
      .from(shots)
      .innerJoin(checkSessions, eq(checkSessions.id, shots.sessionId))
      .where(eq(checkSessions.projectId, pid))
      .groupBy(shots.sessionId),
    db
      .select({
        shotId: exclusions.shotId,
        sensorId: shots.sensorId,
        takenAt: shots.takenAt,
        referenceM: shots.referenceM,
        errorMm: shots.errorMm,
        reason: exclusions.reason,
        byName: users.name,
        byEmail: users.email,
        at: exclusions.createdAt,
        restoredAt: exclusions.restoredAt,
        restoredBy: exclusions.restoredBy,
        restoreReason: exclusions.restoreReason,
        id: exclusions.id,
      })
      .from(exclusions)
      .innerJoin(shots, eq(shots.id, exclusions.shotId))
      .innerJoin(checkSessions, eq(checkSessions.id, shots.sessionId))
      .innerJoin(users, eq(users.id, exclusions.byUserId))
      .where(eq(checkSessions.projectId, pid)),
    db
      .select({
        id: signOffs.id,
        sensorId: signOffs.sensorId,
        decision: signOffs.decision,
        verdict: signOffs.verdict,
        biasMm: signOffs.biasMm,
        note: signOffs.note,
        byName: users.name,
        byEmail: users.email,
        at: signOffs.createdAt,
        periodFrom: signOffs.periodFrom,
        periodTo: signOffs.periodTo,
      })
      .from(signOffs)
      .innerJoin(users, eq(users.id, signOffs.byUserId))
      .where(eq(signOffs.projectId, pid)),
    db
      .select({ n: sql<number>`count(*)` })
      .from(photos)
      .innerJoin(shots, eq(shots.id, photos.shotId))
      .innerJoin(checkSessions, eq(checkSessions.id, shots.sessionId))
      .where(eq(checkSessions.projectId, pid)),
  ]);

  const sensorIds = [...new Set([...linkedSensors.map((r) => r.id), ...sessionRows.map((s) => s.sensorId), ...signOffRows.map((s) => s.sensorId)])];
  const siteIds = [...new Set([...linkedSites.map((r) => r.id), ...sessionRows.map((s) => s.siteId)])];
  const [sensorRows, siteRows, restorers] = await Promise.all([
    sensorIds.length ? db.select().from(sensors).where(inArray(sensors.id, sensorIds)) : Promise.resolve([]),
    siteIds.length ? db.select({ id: sites.id, name: sites.name, lat: sites.lat, lon: sites.lon }).from(sites).where(inArray(sites.id, siteIds)) : Promise.resolve([]),
    (() => {
      const ids = [...new Set(exclusionRows.map((e) => e.restoredBy).filter((x): x is string => !!x))];
      return ids.length ? db.select({ id: users.id, name: users.name, email: users.email }).from(users).where(inArray(users.id, ids)) : Promise.resolve([]);
    })(),
  ]);
  const sensorById = new Map(sensorRows.map((s) => [s.id, s]));
  const siteById = new Map(siteRows.map((s) => [s.id, s]));
  const counts = new Map(shotCounts.map((c) => [c.sessionId, c]));
  const rule = {
    minShots: project.minShots,
    coverageK: project.coverageK,
    minWithinPct: project.minWithinPct,
    rangeBandEdgesM: [...project.rangeBandEdgesM],
    referenceRatio: project.referenceRatio,
    referenceInVerdict: project.referenceInVerdict,
    statement: project.statement,
    edmUncertaintyMm: project.edmUncertaintyMm,
    edmUncertaintyPpm: project.edmUncertaintyPpm,
  };

  const sensorList: ProjectReportSensor[] = [];
  for (const s of [...sensorRows].sort((a, b) => a.label.localeCompare(b.label, "en") || (a.id < b.id ? -1 : 1))) {
    const sessionIds = sessionRows.filter((x) => x.sensorId === s.id).map((x) => x.id);
    const head = {
      id: s.id,
      label: s.label,
      serial: s.serial,
      kind: s.kind,
      wavelengthNm: s.wavelengthNm,
      toleranceMm: s.toleranceMm,
      tolerancePpm: s.tolerancePpm,
      laserClass: s.laserClass,
      calibrationDue: s.calibrationDue,
    };
    if (sessionIds.length === 0) {
      // without a session of its own an empty selection would mean "all the sensor's shots"
      sensorList.push({
        ...head,
        figures: null,
        verdict: "insufficient",
        statementSentence: "Not tested on this project: no check-shots.",
        why: [`No check-shots on this project (the rule asks for at least ${rule.minShots}).`],
        shotsSha256: sha256Hex("[]"),
      });
      continue;
    }
    const { why, shotsSha256, ...figures } = await sensorFigures(actor, s.id, pid, sessionIds, db);
    sensorList.push({
      ...head,
      figures,
      verdict: figures.verdict,
      statementSentence: accuracyStatement(figures, figures.statement).sentence,
      why,
      shotsSha256,
    });
  }

  const sessionList = sessionRows
    .map((x) => ({
      id: x.id,
      sensorId: x.sensorId,
      sensorLabel: sensorById.get(x.sensorId)?.label ?? x.sensorId,
      siteId: x.siteId,
      siteName: siteById.get(x.siteId)?.name ?? x.siteId,
      startedAt: x.startedAt,
      shots: Number(counts.get(x.id)?.n ?? 0),
      excluded: Number(counts.get(x.id)?.excluded ?? 0),
      crew: x.crewName || x.crewEmail ? who(x.crewName, x.crewEmail) : "—",
      airTempC: x.airTempC,
      pressureHpa: x.pressureHpa,
      humidityPct: x.humidityPct,
    }))
    .sort((a, b) => byInstant(a.startedAt, b.startedAt) || (a.id < b.id ? -1 : 1));
  const days = sessionList.map((s) => s.startedAt.slice(0, 10)).sort();
  const restorerById = new Map(restorers.map((u) => [u.id, who(u.name, u.email)]));

  return {
    format: PROJECT_REPORT_FORMAT,
    project: { id: project.id, name: project.name, client: project.client, retired: project.retiredAt != null },
    rule,
    sensors: sensorList,
    sites: siteRows.map((s) => ({ id: s.id, name: s.name, lat: s.lat, lon: s.lon })).sort((a, b) => a.name.localeCompare(b.name, "en") || (a.id < b.id ? -1 : 1)),
    sessions: sessionList,
    period: days.length ? { first: days[0]!, last: days.at(-1)! } : null,
    exclusions: exclusionRows
      .sort((a, b) => byInstant(a.at, b.at) || (a.id < b.id ? -1 : 1))
      .map((e) => ({
        shotId: e.shotId,
        sensorLabel: sensorById.get(e.sensorId)?.label ?? e.sensorId,
        takenAt: e.takenAt,
        referenceM: e.referenceM,
        errorMm: e.errorMm,
        reason: e.reason,
        by: who(e.byName, e.byEmail),
        at: e.at,
        restoredAt: e.restoredAt,
        restoredBy: e.restoredBy ? (restorerById.get(e.restoredBy) ?? e.restoredBy) : null,
        restoreReason: e.restoreReason,
      })),
    signOffs: signOffRows
      .sort((a, b) => byInstant(a.at, b.at) || (a.id < b.id ? -1 : 1))
      .map((s) => ({
        id: s.id,
        sensorId: s.sensorId,
        sensorLabel: sensorById.get(s.sensorId)?.label ?? s.sensorId,
        decision: s.decision,
        verdict: s.verdict,
        biasMm: s.biasMm,
        note: s.note,
        by: who(s.byName, s.byEmail),
        at: s.at,
        periodFrom: s.periodFrom,
        periodTo: s.periodTo,
      })),
    totals: {
      shots: sessionList.reduce((a, s) => a + s.shots, 0),
      excluded: sessionList.reduce((a, s) => a + s.excluded, 0),
      photos: Number(photoCount[0]?.n ?? 0),
    },
  };
}
