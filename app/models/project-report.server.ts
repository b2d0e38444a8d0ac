// The project verification report (issue 14): what the client receives. Its content is built
// from the records (the per-sensor figures through the sensor report of reports.server, judged
// by the project's rule over the project's own sessions), written as RFC 8785 canonical JSON and
// hashed with SHA-256. A version is stored whenever the content differs from the last stored
// one (a new shot, an exclusion or restore, a sign-off, a rule change, a renamed sensor…);
// versions are never changed or deleted, so every document a client received stays retrievable
// and its hash can be checked against its stored content.
//
// Access: members of the project (any role) and admins (scope.server); anyone else gets null,
// which the routes answer with 404 exactly like an unknown project.
import { createHash } from "node:crypto";
import canonicalize from "canonicalize";
import { and, asc, desc, eq, inArray, sql } from "drizzle-orm";
import { Zip, ZipDeflate, ZipPassThrough, strToU8 } from "fflate";
import Papa from "papaparse";
import { getDb, type Db } from "~/db/client.server";
import { checkSessions, exclusions, photos, projectReportVersions, projects, projectSensors, projectSites, sensors, shots, signOffs, sites, targets, users } from "~/db/schema";
import { accuracyStatement, explainVerdict, PROJECT_REPORT_FORMAT, versionedNumber, type ProjectReportContent, type ProjectReportSensor, type ProjectSensorFigures } from "~/domain";
import type { Actor } from "./actor";
import { audit } from "./audit.server";
import { openPhoto, type PhotoRow } from "./photos.server";
import { computeSensorReport } from "./reports.server";
import { inScope, scopeOf } from "./scope.server";
import { isConstraintError } from "./sensors.server";

type ProjectRow = typeof projects.$inferSelect;

export type ReportVersion = {
  projectId: string;
  version: number;
  /** e.g. "SB-CORRIDOR-v3" */
  number: string;
  sha256: string;
  createdAt: string;
  createdBy: string;
  content: ProjectReportContent;
  /** The stored canonical text, exactly what was hashed. */
  text: string;
};

export type VersionListRow = { version: number; number: string; sha256: string; createdAt: string; createdBy: string };

export function sha256Hex(text: string): string {
  return createHash("sha256").update(text, "utf8").digest("hex");
}

/** RFC 8785 (JSON Canonicalization Scheme): one text per content, whatever the key order. */
export function canonicalText(content: unknown): string {
  const t = canonicalize(content);
  if (t === undefined) throw new Error("The report content cannot be written as JSON.");
  return t;
}

/** The project when the actor may see it (member or admin), else null (answer 404). */
export async function projectForActor(actor: Pick<Actor, "id" | "role">, projectId: string, db: Db = getDb()): Promise<ProjectRow | null> {
  const scope = await scopeOf(actor, db);
  if (!inScope(scope, projectId)) return null;
  const [row] = await db.select().from(projects).where(eq(projects.id, projectId));
  return row ?? null;
}

const who = (name: string | null, email: string | null) => (name && name.trim() ? name : (email ?? "unknown"));
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

type StoredRow = typeof projectReportVersions.$inferSelect & { byName: string | null; byEmail: string | null };

function versionOf(r: StoredRow): ReportVersion {
  return {
    projectId: r.projectId,
    version: r.version,
    number: versionedNumber(r.projectId, r.version),
    sha256: r.sha256,
    createdAt: r.createdAt,
    createdBy: r.byName || r.byEmail ? who(r.byName, r.byEmail) : "Shotbook",
    content: JSON.parse(r.content) as ProjectReportContent,
    text: r.content,
  };
}

function storedQuery(db: Db, projectId: string) {
  return db
    .select({
      projectId: projectReportVersions.projectId,
      version: projectReportVersions.version,
      content: projectReportVersions.content,
      sha256: projectReportVersions.sha256,
      createdAt: projectReportVersions.createdAt,
      createdBy: projectReportVersions.createdBy,
      byName: users.name,
      byEmail: users.email,
    })
    .from(projectReportVersions)
    .leftJoin(users, eq(users.id, projectReportVersions.createdBy))
    .where(eq(projectReportVersions.projectId, projectId))
    .$dynamic();
}

/**
 * The report as it stands now: the last stored version when its content is the current one,
 * else a new version (number + 1). Null when the actor may not see the project.
 */
export async function currentProjectReport(actor: Actor, projectId: string, db: Db = getDb()): Promise<ReportVersion | null> {
  const project = await projectForActor(actor, projectId, db);
  if (!project) return null;
  const text = canonicalText(await buildProjectReportContent(actor, project, db));
  const sha256 = sha256Hex(text);
  // two readers may find the same change at once: the primary key (project, version) lets one
  // write it; the other reads it back
  for (let attempt = 0; attempt < 5; attempt++) {
    const [last] = await storedQuery(db, projectId).orderBy(desc(projectReportVersions.version)).limit(1);
    if (last && last.sha256 === sha256) return versionOf(last);
    const version = (last?.version ?? 0) + 1;
    try {
      await db.insert(projectReportVersions).values({ projectId, version, content: text, sha256, createdBy: actor.id === "system" ? null : actor.id });
    } catch (e) {
      if (isConstraintError(e)) continue;
      throw e;
    }
    await audit(actor.id === "system" ? null : actor.id, "project-report.version", "project", projectId, { version, sha256 });
    const [row] = await storedQuery(db, projectId).where(and(eq(projectReportVersions.projectId, projectId), eq(projectReportVersions.version, version)));
    return versionOf(row!);
  }
  throw new Error(`The report of project ${projectId} kept changing while it was written; try again.`);
}

/** Every stored version, newest first (null when the actor may not see the project). */
export async function listProjectReportVersions(actor: Actor, projectId: string, db: Db = getDb()): Promise<VersionListRow[] | null> {
  if (!(await projectForActor(actor, projectId, db))) return null;
  const rows = await db
    .select({ version: projectReportVersions.version, sha256: projectReportVersions.sha256, createdAt: projectReportVersions.createdAt, byName: users.name, byEmail: users.email })
    .from(projectReportVersions)
    .leftJoin(users, eq(users.id, projectReportVersions.createdBy))
    .where(eq(projectReportVersions.projectId, projectId))
    .orderBy(desc(projectReportVersions.version));
  return rows.map((r) => ({
    version: r.version,
    number: versionedNumber(projectId, r.version),
    sha256: r.sha256,
    createdAt: r.createdAt,
    createdBy: r.byName || r.byEmail ? who(r.byName, r.byEmail) : "Shotbook",
  }));
}

/** One stored version as it was (null when unknown or out of the actor's scope). */
export async function projectReportVersion(actor: Actor, projectId: string, version: number, db: Db = getDb()): Promise<ReportVersion | null> {
  if (!Number.isInteger(version) || version < 1) return null;
  if (!(await projectForActor(actor, projectId, db))) return null;
  const [row] = await storedQuery(db, projectId).where(and(eq(projectReportVersions.projectId, projectId), eq(projectReportVersions.version, version)));
  return row ? versionOf(row) : null;
}

// ---------------------------------------------------------------------------------------------
// Downloads: the CSV bundle (shots + summary + the photos, zipped) and the GeoJSON.

const shotColumns = {
  id: shots.id,
  takenAt: shots.takenAt,
  sessionId: shots.sessionId,
  sensorId: shots.sensorId,
  sensorLabel: sensors.label,
  sensorSerial: sensors.serial,
  siteName: sites.name,
  targetLabel: targets.label,
  referenceMethod: shots.referenceMethod,
  referenceM: shots.referenceM,
  referenceUncertaintyMm: shots.referenceUncertaintyMm,
  rangeM: shots.rangeM,
  errorMm: shots.errorMm,
  limitMm: shots.limitMm,
  within: shots.within,
  repeatabilityMm: shots.repeatabilityMm,
  reflectancePct: shots.reflectancePct,
  illuminanceKlux: shots.illuminanceKlux,
  incidenceDeg: shots.incidenceDeg,
  lat: shots.lat,
  lon: shots.lon,
  accuracyM: shots.accuracyM,
  wrap: shots.wrap,
  excluded: shots.excluded,
  note: shots.note,
};

async function projectShots(projectId: string, db: Db) {
  return db
    .select(shotColumns)
    .from(shots)
    .innerJoin(checkSessions, eq(checkSessions.id, shots.sessionId))
    .innerJoin(sensors, eq(sensors.id, shots.sensorId))
    .innerJoin(sites, eq(sites.id, checkSessions.siteId))
    .leftJoin(targets, eq(targets.id, shots.targetId))
    .where(eq(checkSessions.projectId, projectId))
    .orderBy(asc(shots.takenAt), asc(shots.id));
}

type Cell = string | number | boolean | null;
const yesNo = (b: boolean) => (b ? "yes" : "no");
// escapeFormulae: a text cell starting with = + - @ would run as a spreadsheet formula (OWASP "CSV injection")
const csv = (rows: Cell[][]) => Papa.unparse(rows, { escapeFormulae: true, newline: "\r\n" }) + "\r\n";

const EXT: Record<string, string> = { "image/jpeg": "jpg", "image/png": "png", "image/webp": "webp", "image/avif": "avif", "image/heic": "heic" };
const safeName = (s: string) => s.replace(/[^A-Za-z0-9._-]+/g, "-").replace(/^-+|-+$/g, "") || "project";

/** Names row, then units row, then one row per shot of the project. */
export const BUNDLE_SHOT_COLUMNS: [name: string, unit: string][] = [
  ["shotId", ""],
  ["takenAt", "ISO 8601"],
  ["sensor", ""],
  ["serial", ""],
  ["sessionId", ""],
  ["site", ""],
  ["target", ""],
  ["referenceMethod", ""],
  ["referenceM", "m"],
  ["referenceUncertaintyMm", "mm (k = 1)"],
  ["rangeM", "m"],
  ["errorMm", "mm"],
  ["limitMm", "mm"],
  ["within", "yes/no"],
  ["repeatabilityMm", "mm"],
  ["reflectancePct", "%"],
  ["illuminanceKlux", "klux"],
  ["incidenceDeg", "°"],
  ["lat", "° WGS 84"],
  ["lon", "° WGS 84"],
  ["positionAccuracyM", "m"],
  ["wrap", "yes/no"],
  ["excluded", "yes/no"],
  ["exclusionReason", ""],
  ["photos", "files in photos/"],
  ["note", ""],
];

export const BUNDLE_SUMMARY_COLUMNS = [
  "document",
  "sha256",
  "sensor",
  "serial",
  "verdict",
  "n",
  "excluded",
  "biasMm",
  "sdMm",
  "rmseMm",
  "rmseCombinedMm",
  "referenceRmseMm",
  "accuracy95Mm",
  "withinPct",
  "zeroOffsetMm",
  "scalePpm",
  "statementStyle",
  "statement",
] as const;

export type Bundle = { filename: string; body: ReadableStream<Uint8Array>; version: ReportVersion };

/**
 * The project's CSV bundle as a zip streamed while it is written: shots.csv, summary.csv (one
 * row per sensor, of the current report version), report.json (that version's content as
 * hashed) and photos/ (each photo as stored, named <shot id>-<photo id>.<ext>). Null when the
 * actor may not see the project.
 */
export async function projectBundle(actor: Actor, projectId: string, db: Db = getDb()): Promise<Bundle | null> {
  const current = await currentProjectReport(actor, projectId, db);
  if (!current) return null;
  const version: ReportVersion = current;
  const rows = await projectShots(projectId, db);
  const ids = rows.map((r) => r.id);
  const [photoRows, reasonRows] = ids.length
    ? await Promise.all([
        db
          .select({ id: photos.id, shotId: photos.shotId, contentType: photos.contentType, bytes: photos.bytes, sha256: photos.sha256, createdAt: photos.createdAt, path: photos.path })
          .from(photos)
          .innerJoin(shots, eq(shots.id, photos.shotId))
          .innerJoin(checkSessions, eq(checkSessions.id, shots.sessionId))
          .where(eq(checkSessions.projectId, projectId))
          .orderBy(asc(photos.createdAt), asc(photos.id)),
        db
          .select({ shotId: exclusions.shotId, reason: exclusions.reason, at: exclusions.createdAt })
          .from(exclusions)
          .innerJoin(shots, eq(shots.id, exclusions.shotId))
          .innerJoin(checkSessions, eq(checkSessions.id, shots.sessionId))
          .where(and(eq(checkSessions.projectId, projectId), sql`${exclusions.restoredAt} IS NULL`))
          .orderBy(asc(exclusions.createdAt)),
      ])
    : [[], []];
  const fileOf = (p: { id: string; shotId: string; contentType: string }) => `photos/${p.shotId}-${p.id}.${EXT[p.contentType] ?? "bin"}`;
  const photosByShot = new Map<string, string[]>();
  for (const p of photoRows) photosByShot.set(p.shotId, [...(photosByShot.get(p.shotId) ?? []), fileOf(p)]);
  const reasons = new Map<string, string>();
  for (const r of reasonRows) reasons.set(r.shotId, r.reason);

  const shotsCsv = csv([
    BUNDLE_SHOT_COLUMNS.map((c) => c[0]),
    BUNDLE_SHOT_COLUMNS.map((c) => c[1]),
    ...rows.map((r): Cell[] => [
      r.id,
      r.takenAt,
      r.sensorLabel,
      r.sensorSerial,
      r.sessionId,
      r.siteName,
      r.targetLabel ?? "",
      r.referenceMethod,
      r.referenceM,
      r.referenceUncertaintyMm,
      r.rangeM,
      r.errorMm,
      r.limitMm,
      yesNo(r.within),
      r.repeatabilityMm,
      r.reflectancePct,
      r.illuminanceKlux,
      r.incidenceDeg,
      r.lat,
      r.lon,
      r.accuracyM,
      yesNo(r.wrap),
      yesNo(r.excluded),
      r.excluded ? (reasons.get(r.id) ?? "") : "",
      (photosByShot.get(r.id) ?? []).join(" "),
      r.note ?? "",
    ]),
  ]);
  const c = version.content;
  const summaryCsv = csv([
    [...BUNDLE_SUMMARY_COLUMNS],
    ...c.sensors.map((s): Cell[] => {
      const f = s.figures;
      return [
        version.number,
        version.sha256,
        s.label,
        s.serial,
        s.verdict,
        f?.n ?? 0,
        f?.excluded ?? 0,
        f?.biasMm ?? null,
        f?.sdMm ?? null,
        f?.rmseMm ?? null,
        f?.rmseCombinedMm ?? null,
        f?.referenceRmseMm ?? null,
        f?.accuracy95Mm ?? null,
        f?.withinPct ?? null,
        f?.zeroOffsetMm ?? null,
        f?.scalePpm ?? null,
        c.rule.statement,
        s.statementSentence,
      ];
    }),
  ]);

  const missing: string[] = [];
  async function* chunks(): AsyncGenerator<Uint8Array> {
    const out: Uint8Array[] = [];
    let failure: Error | null = null;
    const zip = new Zip((err, data) => {
      if (err) failure = err;
      else out.push(data);
    });
    const drain = function* () {
      if (failure) throw failure;
      while (out.length) yield out.shift()!;
    };
    const text = (name: string, body: string) => {
      const f = new ZipDeflate(name, { level: 6 });
      zip.add(f);
      f.push(strToU8(body), true);
    };
    text("shots.csv", shotsCsv);
    text("summary.csv", summaryCsv);
    text("report.json", version.text);
    yield* drain();
    for (const p of photoRows) {
      const found = await openPhoto(p as PhotoRow);
      if (!found) {
        missing.push(fileOf(p));
        continue;
      }
      // photos are compressed already: stored as they are
      const f = new ZipPassThrough(fileOf(p));
      zip.add(f);
      const reader = found.body.getReader();
      for (;;) {
        const { value, done } = await reader.read();
        if (done) break;
        f.push(value);
        yield* drain();
      }
      f.push(new Uint8Array(0), true);
      yield* drain();
    }
    text(
      "README.txt",
      [
        `Project verification report ${version.number} (${c.project.name}${c.project.client ? `, client ${c.project.client}` : ""})`,
        `SHA-256 of report.json: ${version.sha256}`,
        `shots.csv: ${rows.length} check-shots (row 1 names, row 2 units). summary.csv: one row per sensor.`,
        `photos/: ${photoRows.length - missing.length} photo file(s), named <shot id>-<photo id>.`,
        ...(missing.length ? [`Missing from the file store (listed in shots.csv, not included): ${missing.join(", ")}`] : []),
        "",
      ].join("\r\n"),
    );
    zip.end();
    yield* drain();
  }
  const it = chunks();
  const body = new ReadableStream<Uint8Array>({
    async pull(controller) {
      try {
        const { value, done } = await it.next();
        if (done) controller.close();
        else controller.enqueue(value);
      } catch (e) {
        controller.error(e);
      }
    },
    async cancel() {
      await it.return(undefined);
    },
  });
  return { filename: `${safeName(version.number)}-bundle.zip`, body, version };
}

/**
 * The project's located shots as a GeoJSON FeatureCollection (RFC 7946: [lon, lat] in WGS 84),
 * with the sites that have a position; the document's number, version and hash as a foreign
 * member. Null when the actor may not see the project.
 */
export async function projectGeoJson(actor: Actor, projectId: string, db: Db = getDb()) {
  const version = await currentProjectReport(actor, projectId, db);
  if (!version) return null;
  const rows = await projectShots(projectId, db);
  const shotFeatures = rows
    .filter((r) => r.lat != null && r.lon != null)
    .map((r) => ({
      type: "Feature" as const,
      id: r.id,
      geometry: { type: "Point" as const, coordinates: [r.lon!, r.lat!] },
      properties: {
        kind: "shot",
        id: r.id,
        sensorId: r.sensorId,
        sensor: r.sensorLabel,
        sessionId: r.sessionId,
        site: r.siteName,
        takenAt: r.takenAt,
        referenceM: r.referenceM,
        rangeM: r.rangeM,
        errorMm: r.errorMm,
        limitMm: r.limitMm,
        within: r.within,
        excluded: r.excluded,
        reflectancePct: r.reflectancePct,
        illuminanceKlux: r.illuminanceKlux,
        accuracyM: r.accuracyM,
      },
    }));
  const siteFeatures = version.content.sites
    .filter((s) => s.lat != null && s.lon != null)
    .map((s) => ({ type: "Feature" as const, id: `site-${s.id}`, geometry: { type: "Point" as const, coordinates: [s.lon!, s.lat!] }, properties: { kind: "site", id: s.id, name: s.name } }));
  return {
    version,
    body: {
      type: "FeatureCollection" as const,
      // RFC 7946 §6.1 foreign member: which document these features belong to
      document: { number: version.number, projectId, version: version.version, sha256: version.sha256 },
      features: [...siteFeatures, ...shotFeatures],
    },
    filename: `${safeName(version.number)}.geojson`,
  };
}

/** The projects whose verification report the actor may open (members: theirs; admins: all live ones). */
export async function reportProjects(actor: Pick<Actor, "id" | "role">, db: Db = getDb()): Promise<{ id: string; name: string; client: string }[]> {
  const scope = await scopeOf(actor, db);
  if (!scope.all && scope.projectIds.length === 0) return [];
  const rows = await db
    .select({ id: projects.id, name: projects.name, client: projects.client })
    .from(projects)
    .where(scope.all ? sql`${projects.retiredAt} IS NULL` : and(sql`${projects.retiredAt} IS NULL`, inArray(projects.id, scope.projectIds)))
    .orderBy(asc(projects.name), asc(projects.id));
  return rows;
}
