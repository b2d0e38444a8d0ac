// Sensor reports (api.md GET /api/sensors/:sensorId/report) and the sensor overview.
//
// issue 16: the figures come from the database, not from every shot read into this process:
// one grouped query sums the selection's shots per (session, exclusion, reflectance class,
// illuminance band, range band) and one read of the index (sensor_id, excluded, error_mm)
// gives the included errors already in ascending order, so the median, MAD and P95|e| stay
// exact order statistics without a sort; app/domain's reportFromAggregates turns both into the
// report. The per-shot rows are read only when asked for (`?include=shots`, the CSV export and
// the screens that list shots). A computed report without rows is small, so it is kept per
// query while a fingerprint of everything it depends on (read first, a few index seeks) is
// unchanged; several app instances on one database never serve each other's stale figures.
// See docs/decisions/0006-report-read-path.md.
//
// Scoping (api.md v1.1): a non-admin reads only the shots of sessions of their projects
// (scopeOf); a sensor in none of their projects answers 404 as if unknown.
import { and, asc, desc, eq, exists, inArray, isNull, or, sql, type SQL } from "drizzle-orm";
import { getDb, type Db } from "~/db/client.server";
import { auditLog, checkSessions, edms, exclusions, projects, projectSensors, sensors, shots, signOffs, tapes, targets } from "~/db/schema";
import { BRIGHT_SUN_KLUX } from "~/domain/coverage";
import { DEFAULT_RULE, pastDueOn, reportFromAggregates, reportRows, aggregateShots, type ReportGroup, type ReportShot, type ReportShotRow, type Rule, type SensorReport } from "~/domain";
import type { Actor } from "./actor";
import { scopeOf } from "./scope.server";
import { periodDay, periodWhere, RECOMPUTE_ACTION, RULE_COLUMNS, ruleOf, sensorSpecOf, type QueryError } from "./shots.server";
import type { RecordError } from "~/contract/sync";

/** `includeShots`: the per-shot rows of api.md v1.1 (`?include=shots`). */
export type ReportQuery = { from?: string; to?: string; sessionIds?: string[]; projectId?: string; includeShots?: boolean };

/** Which sessions' shots a reader may see: null = all (admins), else those of these projects. */
export type ProjectFilter = string[] | null;

/** issue 15: a certificate behind the report and the sessions it was past due on (ranging.md §7). */
export type TraceabilityEntry = {
  kind: "sensor" | "tape" | "edm";
  id: string;
  label: string;
  number: string | null;
  laboratory: string | null;
  issued: string | null;
  due: string | null;
  expiredOnSessions: string[];
};

/** The report exactly as api.md lists its fields (the domain's `failed` is the tests with pass false). */
export type SensorReportJson = {
  sensorId: string;
  rule: {
    minShots: number;
    coverageK: number;
    minWithinPct: number;
    referenceRatio: number;
    referenceInVerdict: boolean;
    statement: "rmse" | "nssda95";
    edmUncertaintyMm: number | null;
    edmUncertaintyPpm: number | null;
  };
  /** The project whose rule judged the report; null for the default rule. */
  ruleProjectId: string | null;
} & Omit<SensorReport, "failed"> & { airDefaulted: string[]; traceability: TraceabilityEntry[] };

/** The report without its per-shot rows: what GET …/report answers unless `include=shots`. */
export type SensorReportSummaryJson = Omit<SensorReportJson, "shots">;

export type SensorSummary = {
  id: string;
  label: string;
  kind: "pulsed" | "cw";
  verdict: SensorReport["verdict"];
  n: number;
  biasMm: number | null;
  rmseMm: number | null;
  lastShotAt: string | null;
};

/** from, to (YYYY-MM-DD), session (repeatable), project, include of GET …/report and …/report.csv. */
export function parseReportQuery(params: URLSearchParams): ReportQuery | QueryError {
  const errors: RecordError[] = [];
  const out: ReportQuery = {};
  for (const key of ["from", "to"] as const) {
    const v = params.get(key);
    if (!v) continue;
    if (periodDay(v)) out[key] = v;
    else errors.push({ path: key, message: `${key} must be a date (YYYY-MM-DD)` });
  }
  if (out.from && out.to && periodDay(out.from)! > periodDay(out.to)!) errors.push({ path: "to", message: "to must not come before from" });
  const sessions = params.getAll("session").filter(Boolean);
  if (sessions.length) out.sessionIds = sessions;
  const project = params.get("project");
  if (project) out.projectId = project;
  for (const inc of params
    .getAll("include")
    .flatMap((v) => v.split(","))
    .filter(Boolean)) {
    if (inc === "shots") out.includeShots = true;
    else errors.push({ path: "include", message: `include may only be "shots" (got "${inc}")` });
  }
  return errors.length ? { status: 400, body: { error: "Invalid query.", errors } } : out;
}

type LoadedShot = ReportShot & { note?: string | null; targetLabel?: string | null };

const reportColumns = {
  id: shots.id,
  takenAt: shots.takenAt,
  sessionId: shots.sessionId,
  sessionStartedAt: checkSessions.startedAt,
  referenceM: shots.referenceM,
  rangeM: shots.rangeM,
  errorMm: shots.errorMm,
  repeatabilityMm: shots.repeatabilityMm,
  reflectancePct: shots.reflectancePct,
  retro: shots.retro,
  illuminanceKlux: shots.illuminanceKlux,
  excluded: shots.excluded,
  wrap: shots.wrap,
  airDefaulted: shots.airDefaulted,
  referenceUncertaintyMm: shots.referenceUncertaintyMm,
};

/** The selection's conditions on shots: the sensor, the period, the sessions and the reader's projects. */
function selectionWhere(db: Db, sensorId: string, q: ReportQuery, projectIds: ProjectFilter): SQL[] {
  const where = [eq(shots.sensorId, sensorId), ...periodWhere(q.from, q.to)];
  if (q.sessionIds?.length) where.push(inArray(shots.sessionId, q.sessionIds));
  if (projectIds) {
    where.push(projectIds.length ? inArray(shots.sessionId, db.select({ id: checkSessions.id }).from(checkSessions).where(inArray(checkSessions.projectId, projectIds))) : sql`0`);
  }
  return where;
}

// ---------------------------------------------------------------------------------------------
// The per-shot rows (only when asked for): one query, one text value per column.

/**
 * %!.17g writes each double with 17 significant digits so it reads back bit for bit (SQLite's
 * own JSON and CAST round to 15); group_concat skips NULL, so a missing figure is 'null'.
 */
const exact = (col: SQL.Aliased | unknown) => sql`printf('%!.17g', ${col})`;
const exactOrNull = (col: unknown) => sql`CASE WHEN ${col} IS NULL THEN 'null' ELSE printf('%!.17g', ${col}) END`;

/**
 * The selection's columns, each packed into ONE text value for all its shots (a list joined by
 * commas): the local client builds a JS object per row and per column (defineProperty), which
 * for 100 000 shots costs seconds, while 10 values and a split or JSON.parse each cost a
 * fraction. Rows come in takenAt order from the index (sensor_id, taken_at, id); SQLite keeps
 * a subquery's order through group_concat in practice, though it does not promise it, so
 * inTimeOrder checks it. Session start times come from their own small query.
 */
function packedQuery(db: Db, where: SQL[]) {
  const o = db
    .select({
      id: shots.id,
      takenAt: shots.takenAt,
      sessionId: shots.sessionId,
      referenceM: exact(shots.referenceM).as("reference_m"),
      rangeM: exact(shots.rangeM).as("range_m"),
      errorMm: exact(shots.errorMm).as("error_mm"),
      repeatabilityMm: exactOrNull(shots.repeatabilityMm).as("repeatability_mm"),
      reflectancePct: exact(shots.reflectancePct).as("reflectance_pct"),
      illuminanceKlux: exactOrNull(shots.illuminanceKlux).as("illuminance_klux"),
      referenceUncertaintyMm: exactOrNull(shots.referenceUncertaintyMm).as("reference_uncertainty_mm"),
      bits: sql<number>`(${shots.retro} + 2 * ${shots.excluded} + 4 * ${shots.wrap} + 8 * ${shots.airDefaulted})`.as("bits"),
    })
    .from(shots)
    .where(and(...where))
    .orderBy(asc(shots.takenAt))
    .as("o");
  const gc = (c: unknown) => sql<string | null>`group_concat(${c})`;
  return db
    .select({
      ids: gc(o.id),
      takenAt: gc(o.takenAt),
      sessionIds: gc(o.sessionId),
      referenceM: gc(o.referenceM),
      rangeM: gc(o.rangeM),
      errorMm: gc(o.errorMm),
      repeatabilityMm: gc(o.repeatabilityMm),
      reflectancePct: gc(o.reflectancePct),
      illuminanceKlux: gc(o.illuminanceKlux),
      referenceUncertaintyMm: gc(o.referenceUncertaintyMm),
      bits: gc(o.bits),
    })
    .from(o);
}
type Packed = Awaited<ReturnType<typeof packedQuery>>[number];

const sessionsQuery = (db: Db, sensorId: string) => db.select({ id: checkSessions.id, startedAt: checkSessions.startedAt }).from(checkSessions).where(eq(checkSessions.sensorId, sensorId));

function numbers(text: string | null, n: number): (number | null)[] | null {
  if (text == null) return null;
  try {
    const v = JSON.parse(`[${text}]`) as unknown;
    return Array.isArray(v) && v.length === n ? (v as (number | null)[]) : null;
  } catch {
    return null;
  }
}
const isNum = (v: unknown): v is number => typeof v === "number";

/** The packed columns → rows; null when anything does not read back cleanly (then the plain query). */
function unpack(p: Packed | undefined, sessions: { id: string; startedAt: string }[]): ReportShot[] | null {
  if (!p || p.ids == null) return [];
  const ids = p.ids.split(",");
  const n = ids.length;
  const taken = p.takenAt?.split(",") ?? [];
  const ses = p.sessionIds?.split(",") ?? [];
  if (taken.length !== n || ses.length !== n) return null; // a comma inside a value
  const ref = numbers(p.referenceM, n);
  const range = numbers(p.rangeM, n);
  const err = numbers(p.errorMm, n);
  const rep = numbers(p.repeatabilityMm, n);
  const refl = numbers(p.reflectancePct, n);
  const lux = numbers(p.illuminanceKlux, n);
  const bits = numbers(p.bits, n);
  const unc = numbers(p.referenceUncertaintyMm, n);
  if (!ref || !range || !err || !rep || !refl || !lux || !bits || !unc) return null;
  // one string per session, not one per shot
  const started = new Map(sessions.map((s) => [s.id, s] as const));
  const out: ReportShot[] = new Array(n);
  for (let i = 0; i < n; i++) {
    const s = started.get(ses[i]!);
    const r = ref[i],
      g = range[i],
      e = err[i],
      q = rep[i],
      f = refl[i],
      l = lux[i],
      b = bits[i],
      u = unc[i];
    if (!s || !isNum(r) || !isNum(g) || !isNum(e) || !isNum(f) || !isNum(b) || (q !== null && !isNum(q)) || (l !== null && !isNum(l)) || (u !== null && !isNum(u))) return null;
    // kept rows are shared by every report of the sensor: frozen, like the reports
    out[i] = Object.freeze({
      id: ids[i]!,
      takenAt: taken[i]!,
      sessionId: s.id,
      sessionStartedAt: s.startedAt,
      referenceM: r,
      rangeM: g,
      errorMm: e,
      repeatabilityMm: q,
      reflectancePct: f,
      illuminanceKlux: l,
      retro: (b & 1) !== 0,
      excluded: (b & 2) !== 0,
      wrap: (b & 4) !== 0,
      airDefaulted: (b & 8) !== 0,
      referenceUncertaintyMm: u,
    });
  }
  return out;
}

const byTimeThenId = (a: ReportShot, b: ReportShot) => (a.takenAt < b.takenAt ? -1 : a.takenAt > b.takenAt ? 1 : a.id < b.id ? -1 : a.id > b.id ? 1 : 0);

/**
 * (takenAt, id) order, as the plain query and /api/shots give it. The packed rows come in
 * takenAt order: ties are put in id order here, and any other disorder gets a full sort.
 */
function inTimeOrder(list: ReportShot[]): ReportShot[] {
  for (let i = 1; i < list.length; i++) {
    if (list[i - 1]!.takenAt > list[i]!.takenAt) return list.sort(byTimeThenId);
  }
  for (let i = 0; i < list.length;) {
    let j = i + 1;
    while (j < list.length && list[j]!.takenAt === list[i]!.takenAt) j++;
    if (j - i > 1) {
      const run = list.slice(i, j).sort(byTimeThenId);
      for (let k = 0; k < run.length; k++) list[i + k] = run[k]!;
    }
    i = j;
  }
  return list;
}

function plainQuery(db: Db, where: SQL[]) {
  return db
    .select({ ...reportColumns, note: shots.note, targetLabel: targets.label })
    .from(shots)
    .innerJoin(checkSessions, eq(checkSessions.id, shots.sessionId))
    .leftJoin(targets, eq(targets.id, shots.targetId))
    .where(and(...where))
    .orderBy(asc(shots.takenAt), asc(shots.id));
}

/** The selection's shots, read from the database, in time order (takenAt, then id). */
export async function loadReportShots(sensorId: string, q: ReportQuery, opts: { details?: boolean } = {}, db: Db = getDb(), projectIds: ProjectFilter = null): Promise<LoadedShot[]> {
  const where = selectionWhere(db, sensorId, q, projectIds);
  if (!opts.details) {
    const [ses, packed] = await db.batch([sessionsQuery(db, sensorId), packedQuery(db, where)]);
    const list = unpack(packed[0], ses);
    if (list) return inTimeOrder(list);
    // a value needed escaping (not possible for synced records): the plain query
  }
  return plainQuery(db, where);
}

// ---------------------------------------------------------------------------------------------
// The figures: group sums and the sorted included errors, in one read transaction.

/** ranging.md §5's bands as SQL, the same comparisons as app/domain's reflectanceIndex, illuminanceIndex, rangeBandIndex. */
function bandColumns(edges: number[]) {
  const d = shots.referenceM;
  const rb = sql.join([sql`CASE WHEN ${d} < ${edges[0]} THEN -1`, ...edges.slice(1).map((edge, i) => sql`WHEN ${d} < ${edge} THEN ${i}`), sql`ELSE ${edges.length - 1} END`], sql` `);
  return {
    rc: sql`CASE WHEN ${shots.retro} THEN 3 WHEN ${shots.reflectancePct} < 20 THEN 0 WHEN ${shots.reflectancePct} <= 60 THEN 1 ELSE 2 END`,
    lb: sql`CASE WHEN ${shots.illuminanceKlux} IS NULL THEN -1 WHEN ${shots.illuminanceKlux} < 10 THEN 0 WHEN ${shots.illuminanceKlux} < 50 THEN 1 ELSE 2 END`,
    rb,
  };
}

type GroupRow = {
  sessionId: string;
  excluded: number;
  rc: number;
  lb: number;
  rb: number;
  n: number;
  within: number | null;
  s1: number | null;
  s2: number | null;
  sq: number | null;
  d1: number | null;
  d2: number | null;
  de: number | null;
  sumD: number | null;
  sumU2: number | null;
  unknownU: number | null;
  maxAbs: number | null;
  sun: number | null;
  air: number | null;
  kE: number | null;
  kD: number | null;
};

/**
 * The selection summed per group. The shifts kE, kD are the error and distance of the included
 * shot with the smallest error (the first entry of the error index): a value of the data keeps
 * the one-pass sums of squares accurate, and the same statement reads it, so the sums and the
 * shifts always agree. The limit is k·(a + b·D/1000) in the same order of operations as
 * app/domain, so `within` is decided bit for bit as there.
 */
function groupsQuery(db: Db, where: SQL[], sensor: { toleranceMm: number; tolerancePpm: number }, rule: Rule) {
  const e = shots.errorMm;
  const d = shots.referenceM;
  const u = shots.referenceUncertaintyMm;
  const { rc, lb, rb } = bandColumns(rule.rangeBandEdgesM);
  const inc = and(...where, eq(shots.excluded, false));
  const kE = sql`(SELECT ke FROM k)`;
  const kD = sql`(SELECT kd FROM k)`;
  const lim = sql`${rule.coverageK} * (${sensor.toleranceMm} + ${sensor.tolerancePpm} * ${d} / 1000)`;
  return db.all<GroupRow>(sql`
    WITH k AS (SELECT ${e} AS ke, ${d} AS kd FROM ${shots} WHERE ${inc} ORDER BY ${e} LIMIT 1)
    SELECT ${shots.sessionId} AS sessionId, ${shots.excluded} AS excluded, ${rc} AS rc, ${lb} AS lb, ${rb} AS rb,
      count(*) AS n,
      sum(abs(${e}) <= ${lim}) AS within,
      sum(${e} - ${kE}) AS s1, sum((${e} - ${kE}) * (${e} - ${kE})) AS s2, sum(${e} * ${e}) AS sq,
      sum(${d} - ${kD}) AS d1, sum((${d} - ${kD}) * (${d} - ${kD})) AS d2, sum((${d} - ${kD}) * (${e} - ${kE})) AS de,
      sum(${d}) AS sumD,
      sum(CASE WHEN ${u} >= 0 AND ${u} <= 1.7976931348623157e308 THEN ${u} * ${u} ELSE 0 END) AS sumU2,
      sum(NOT (${u} >= 0 AND ${u} <= 1.7976931348623157e308) OR ${u} IS NULL) AS unknownU,
      max(abs(${e})) AS maxAbs,
      max(${shots.illuminanceKlux} >= ${BRIGHT_SUN_KLUX}) AS sun,
      max(${shots.airDefaulted}) AS air,
      ${kE} AS kE, ${kD} AS kD
    FROM ${shots} WHERE ${and(...where)}
    GROUP BY 1, 2, 3, 4, 5`);
}

/**
 * The included errors in ascending order, as one text value (%!.17g reads back bit for bit; one
 * value, not a JS object per row, which costs the client seconds at 100 000 rows). They come
 * from the index (sensor_id, excluded, error_mm) in its order: no sort here or in JS.
 */
function sortedErrorsQuery(db: Db, where: SQL[]) {
  return db.all<{ v: string | null; n: number }>(sql`
    SELECT group_concat(v) AS v, count(*) AS n FROM (
      SELECT printf('%!.17g', ${shots.errorMm}) AS v FROM ${shots} WHERE ${and(...where, eq(shots.excluded, false))} ORDER BY ${shots.errorMm}
    )`);
}

function sortedErrorsOf(row: { v: string | null; n: number } | undefined): Float64Array {
  if (!row || row.v == null) return new Float64Array(0);
  const list = JSON.parse(`[${row.v}]`) as number[];
  if (list.length !== Number(row.n)) throw new Error("report: the sorted errors did not read back");
  const out = Float64Array.from(list);
  // SQLite keeps a subquery's order through group_concat in practice, though it does not promise it
  for (let i = 1; i < out.length; i++) if (out[i - 1]! > out[i]!) return out.sort();
  return out;
}

/** (session, day, tape, EDM) uses of the selection's shots: a few rows per session (ranging.md §7 traceability). */
function usesQuery(db: Db, where: SQL[]) {
  // the very expressions of the index shots_sensor_uses (app/db/schema.ts), so it covers this query
  const tapeId = sql<string | null>`(${shots.raw} ->> '$.reference.tape.tapeId')`;
  const edmId = sql<string | null>`(${shots.raw} ->> '$.reference.edmId')`;
  const day = sql<string>`substr(${shots.takenAt}, 1, 10)`;
  // DISTINCT, not GROUP BY: SQLite takes DISTINCT's expressions from the index, while GROUP BY
  // reads every raw record again (measured: 65 ms against 2 s at 100,000 shots)
  return db
    .selectDistinct({ sessionId: shots.sessionId, tapeId, edmId, day })
    .from(shots)
    .where(and(...where, inArray(shots.referenceMethod, ["tape", "edm"])));
}
type Use = { sessionId: string; tapeId: string | null; edmId: string | null; day: string };

const num = (v: number | null | undefined) => Number(v ?? 0);

function groupsOf(rows: GroupRow[], startedAt: Map<string, string>): { groups: ReportGroup[]; kE: number; kD: number } {
  let kE = 0;
  let kD = 0;
  const groups = rows.map((r): ReportGroup => {
    if (r.kE != null) kE = Number(r.kE);
    if (r.kD != null) kD = Number(r.kD);
    return {
      sessionId: r.sessionId,
      sessionStartedAt: startedAt.get(r.sessionId) ?? "",
      excluded: !!r.excluded,
      reflectance: Number(r.rc),
      illuminance: Number(r.lb),
      rangeBand: Number(r.rb),
      n: Number(r.n),
      within: num(r.within),
      s1: num(r.s1),
      s2: num(r.s2),
      sq: num(r.sq),
      d1: num(r.d1),
      d2: num(r.d2),
      de: num(r.de),
      sumD: num(r.sumD),
      sumU2: num(r.sumU2),
      unknownU: num(r.unknownU),
      maxAbs: num(r.maxAbs),
      sun: !!r.sun,
      airDefaulted: !!r.air,
    };
  });
  return { groups, kE, kD };
}

// ---------------------------------------------------------------------------------------------
// The fingerprint.

/**
 * What the sensor's shots looked like when read: any insert, exclusion, restore or
 * recomputation changes it. Every part is a b-tree seek, not a scan of the sensor's shots:
 * - the largest rowid of the whole shots table: an insert anywhere moves it (shots are never
 *   deleted but with their sensor, whose created_at is part of the fingerprint too);
 * - the count of the sensor's exclusion rows and of the restored ones (exclusion rows are
 *   never deleted; a restore fills restored_at), walked from the exclusions, which are few;
 * - the marks every recomputation writes in the transaction of its updates (shots.server).
 */
type ShotsStamp = { maxRowid: number; exclusions: number; restored: number; recomputes: number; lastRecompute: number };

function stampQueries(db: Db, sensorId: string) {
  return [
    // a bare max(rowid) is one step down the table's b-tree; wrapped in anything it is a scan
    db.select({ maxRowid: sql<number | null>`max(${shots}.rowid)` }).from(shots),
    db
      .select({ n: sql<number>`count(*)`, restored: sql<number>`count(${exclusions.restoredAt})` })
      .from(exclusions)
      .crossJoin(shots) // CROSS JOIN keeps exclusions as the outer loop
      .where(and(eq(shots.id, exclusions.shotId), eq(shots.sensorId, sensorId))),
    db
      .select({ n: sql<number>`count(*)`, last: sql<number>`ifnull(max(${auditLog}.rowid), 0)` })
      .from(auditLog)
      .where(and(eq(auditLog.entity, "sensor"), eq(auditLog.entityId, sensorId), eq(auditLog.action, RECOMPUTE_ACTION))),
  ] as const;
}

type StampRows = [{ maxRowid: number | null }[], { n: number; restored: number }[], { n: number; last: number }[]];
function stampOf([a, b, c]: StampRows): ShotsStamp {
  return {
    maxRowid: Number(a[0]?.maxRowid ?? 0),
    exclusions: Number(b[0]?.n ?? 0),
    restored: Number(b[0]?.restored ?? 0),
    recomputes: Number(c[0]?.n ?? 0),
    lastRecompute: Number(c[0]?.last ?? 0),
  };
}

const ruleCols = { id: projects.id, ...RULE_COLUMNS };

/** issue 15: the certificates of the (small) tape and EDM registries, read with every report's state. */
const certCols = <T extends typeof tapes | typeof edms>(t: T) => ({
  id: t.id,
  label: t.label,
  number: t.certNumber,
  laboratory: t.certLaboratory,
  issued: t.certIssued,
  due: t.certDue,
});
type CertRow = { id: string; label: string; number: string | null; laboratory: string | null; issued: string | null; due: string | null };

type State = {
  /** Undefined when unknown or outside the reader's projects (both answer 404). */
  sensor: typeof sensors.$inferSelect | undefined;
  rule: { rule: Rule; projectId: string | null } | QueryError;
  tapeCerts: CertRow[];
  edmCerts: CertRow[];
  lastBias: number | null;
  stamp: ShotsStamp;
  /** Everything above as one string: the kept report of a query is good while it is unchanged. */
  fingerprint: string;
};

/**
 * One read transaction: the sensor, the rule of the report (the chosen project's, which the
 * reader must belong to; without one, the project's when the sensor belongs to exactly one live
 * project of the reader's, else the default rule of ranging.md §6), the bias of the last
 * approved sign-off (drift), the certificates, the stamp of the shots and the sessions' projects
 * (an admin assigning a session to a project changes what members see).
 */
async function readState(db: Db, sensorId: string, projectId: string | undefined, projectIds: ProjectFilter): Promise<State> {
  const mine = (col: typeof projectSensors.projectId | typeof projects.id) => (projectIds ? (projectIds.length ? inArray(col, projectIds) : sql`0`) : undefined);
  const [sensorRows, ruleRows, biasRows, tapeCerts, edmCerts, visible, sessionProjects, ...stamps] = await db.batch([
    db.select().from(sensors).where(eq(sensors.id, sensorId)),
    db
      .select(ruleCols)
      .from(projects)
      .where(
        projectId
          ? and(eq(projects.id, projectId), mine(projects.id))
          : and(isNull(projects.retiredAt), mine(projects.id), inArray(projects.id, db.select({ id: projectSensors.projectId }).from(projectSensors).where(eq(projectSensors.sensorId, sensorId)))),
      )
      .limit(2),
    db
      .select({ biasMm: signOffs.biasMm })
      .from(signOffs)
      .where(and(eq(signOffs.sensorId, sensorId), eq(signOffs.decision, "approved")))
      .orderBy(desc(signOffs.createdAt))
      .limit(1),
    db.select(certCols(tapes)).from(tapes),
    db.select(certCols(edms)).from(edms),
    // a member sees a sensor linked to one of their projects or used in one of their sessions
    db
      .select({ one: sql<number>`1` })
      .from(sensors)
      .where(
        and(
          eq(sensors.id, sensorId),
          projectIds
            ? or(
                exists(
                  db
                    .select({ one: sql`1` })
                    .from(projectSensors)
                    .where(and(eq(projectSensors.sensorId, sensorId), mine(projectSensors.projectId))),
                ),
                exists(
                  db
                    .select({ one: sql`1` })
                    .from(checkSessions)
                    .where(and(eq(checkSessions.sensorId, sensorId), projectIds.length ? inArray(checkSessions.projectId, projectIds) : sql`0`)),
                ),
              )
            : undefined,
        ),
      ),
    db
      .select({ v: sql<string | null>`group_concat(${checkSessions.id} || '=' || ifnull(${checkSessions.projectId}, ''))` })
      .from(checkSessions)
      .where(eq(checkSessions.sensorId, sensorId)),
    ...stampQueries(db, sensorId),
  ]);
  const rule: State["rule"] = projectId
    ? ruleRows[0]
      ? { rule: ruleOf(ruleRows[0]), projectId: ruleRows[0].id }
      : { status: 404, body: { error: `No project ${projectId}.` } }
    : ruleRows.length === 1
      ? { rule: ruleOf(ruleRows[0]!), projectId: ruleRows[0]!.id }
      : { rule: DEFAULT_RULE, projectId: null };
  const lastBias = biasRows[0]?.biasMm ?? null;
  const stamp = stampOf(stamps as StampRows);
  const sensor = visible.length ? sensorRows[0] : undefined;
  // the certificates are part of the report (traceability): an edit to one is a new report
  return {
    sensor,
    rule,
    tapeCerts,
    edmCerts,
    lastBias,
    stamp,
    fingerprint: JSON.stringify([sensor, "rule" in rule ? [rule.rule, rule.projectId] : null, lastBias, stamp, tapeCerts, edmCerts, sessionProjects[0]?.v ?? null]),
  };
}

// ---------------------------------------------------------------------------------------------
// Computed reports without rows, kept per query while their fingerprint holds (a few KB each).

type Kept = { fingerprint: string; built: Built; json: Uint8Array<ArrayBuffer> | null; lastShotAt?: string | null };
const KEPT_MAX = 500;
const keptByDb = new WeakMap<Db, Map<string, Kept>>();

function keptOf(db: Db): Map<string, Kept> {
  let m = keptByDb.get(db);
  if (!m) keptByDb.set(db, (m = new Map()));
  return m;
}

/** Forgets the reports this process keeps for the database (tests and the bench; never needed for correctness). */
export function clearReportCache(db: Db = getDb()) {
  keptByDb.delete(db);
}

// ---------------------------------------------------------------------------------------------
// The report.

function toJson(
  sensorId: string,
  rule: Rule,
  ruleProjectId: string | null,
  r: Omit<SensorReport, "shots" | "failed">,
  defaulted: Set<string>,
  traceability: TraceabilityEntry[],
  rows: ReportShotRow[] | null,
): SensorReportSummaryJson & { shots?: ReportShotRow[] } {
  // api.md's field order
  return {
    sensorId,
    rule: {
      minShots: rule.minShots,
      coverageK: rule.coverageK,
      minWithinPct: rule.minWithinPct,
      referenceRatio: rule.referenceRatio ?? 2,
      referenceInVerdict: rule.referenceInVerdict ?? false,
      statement: rule.statement ?? "rmse",
      edmUncertaintyMm: rule.edmUncertaintyMm ?? null,
      edmUncertaintyPpm: rule.edmUncertaintyPpm ?? null,
    },
    ruleProjectId,
    n: r.n,
    excluded: r.excluded,
    biasMm: r.biasMm,
    biasCi95Mm: r.biasCi95Mm,
    sdMm: r.sdMm,
    rmseMm: r.rmseMm,
    accuracy95Mm: r.accuracy95Mm,
    p95AbsMm: r.p95AbsMm,
    maxAbsMm: r.maxAbsMm,
    withinPct: r.withinPct,
    zeroOffsetMm: r.zeroOffsetMm,
    zeroOffsetSeMm: r.zeroOffsetSeMm,
    scalePpm: r.scalePpm,
    scaleSePpm: r.scaleSePpm,
    // ranging.md §7 (issue 15)
    zeroOffsetT: r.zeroOffsetT,
    zeroOffsetSignificant: r.zeroOffsetSignificant,
    referenceRmseMm: r.referenceRmseMm,
    referenceUnknownN: r.referenceUnknownN,
    rmseCombinedMm: r.rmseCombinedMm,
    statement: r.statement,
    tests: r.tests,
    verdict: r.verdict,
    byReflectance: r.byReflectance,
    byIlluminance: r.byIlluminance,
    byRange: r.byRange,
    rSquared: r.rSquared,
    airDefaulted: r.drift.map((d) => d.sessionId).filter((id) => defaulted.has(id)),
    coverage: r.coverage,
    drift: r.drift,
    traceability,
    ...(rows ? { shots: rows } : {}),
  };
}

/**
 * ranging.md §7 traceability: the sensor when it has a certificate; each tape or reference EDM
 * any shot of the selection used, with the sessions whose own date was after its due date.
 * `startedAt`: every session of the selection (excluded shots too).
 */
function traceabilityOf(sensor: typeof sensors.$inferSelect, startedAt: Map<string, string>, uses: Use[], tapeCerts: CertRow[], edmCerts: CertRow[]): TraceabilityEntry[] {
  const expired = (due: string | null, ids: Iterable<string>) => [...ids].filter((id) => pastDueOn(due, startedAt.get(id) ?? "")).sort((a, b) => (startedAt.get(a)! < startedAt.get(b)! ? -1 : 1));
  const out: TraceabilityEntry[] = [];
  if (sensor.certNumber || sensor.certDue) {
    out.push({
      kind: "sensor",
      id: sensor.id,
      label: sensor.label,
      number: sensor.certNumber,
      laboratory: sensor.certLaboratory,
      issued: sensor.certIssued,
      due: sensor.certDue,
      expiredOnSessions: expired(sensor.certDue, startedAt.keys()),
    });
  }
  const used = { tape: new Map<string, Set<string>>(), edm: new Map<string, Set<string>>() };
  for (const u of uses) {
    for (const [kind, id] of [
      ["tape", u.tapeId],
      ["edm", u.edmId],
    ] as const) {
      if (!id) continue;
      if (!used[kind].has(id)) used[kind].set(id, new Set());
      used[kind].get(id)!.add(u.sessionId);
    }
  }
  for (const [kind, certs] of [
    ["tape", tapeCerts],
    ["edm", edmCerts],
  ] as const) {
    const byId = new Map(certs.map((c) => [c.id, c]));
    for (const [id, sessionsUsed] of [...used[kind]].sort(([a], [b]) => (a < b ? -1 : 1))) {
      const c = byId.get(id);
      out.push({
        kind,
        id,
        label: c?.label ?? id,
        number: c?.number ?? null,
        laboratory: c?.laboratory ?? null,
        issued: c?.issued ?? null,
        due: c?.due ?? null,
        expiredOnSessions: expired(c?.due ?? null, sessionsUsed),
      });
    }
  }
  return out;
}

type Built = {
  status: 200;
  body: SensorReportSummaryJson & { shots?: ReportShotRow[] };
  sensor: { id: string; label: string; serial: string; kind: "pulsed" | "cw" };
  rule: Rule;
  /** The shots behind the rows (empty without rows). */
  details: LoadedShot[];
};
type BuiltWithRows = Omit<Built, "body"> & { body: SensorReportJson };

const queryKey = (sensorId: string, q: ReportQuery, projectIds: ProjectFilter) =>
  JSON.stringify([
    sensorId,
    q.from ? periodDay(q.from) : null,
    q.to ? periodDay(q.to) : null,
    [...new Set(q.sessionIds ?? [])].sort(),
    q.projectId ?? null,
    projectIds ? [...projectIds].sort() : null,
  ]);

function checkedQuery(query: ReportQuery | URLSearchParams): ReportQuery | QueryError {
  const q = query instanceof URLSearchParams ? parseReportQuery(query) : query;
  if ("status" in q) return q;
  for (const key of ["from", "to"] as const) {
    const v = q[key];
    if (v && !periodDay(v)) return { status: 400, body: { error: "Invalid query.", errors: [{ path: key, message: `${key} must be a date (YYYY-MM-DD)` }] } };
  }
  return q;
}

/**
 * The report of a selection for readers limited to `projectIds` (null: all sessions). With
 * `rows` (or `details`, which adds each shot's note and target label) it carries the per-shot
 * rows, computed from the shots read for it; without, it comes from the sums and the error
 * index and is kept while its fingerprint holds.
 */
async function report(
  sensorId: string,
  query: ReportQuery | URLSearchParams,
  projectIds: ProjectFilter,
  opts: { rows?: boolean; details?: boolean },
  db: Db,
): Promise<{ built: Built; kept: Kept | null } | QueryError> {
  const q = checkedQuery(query);
  if ("status" in q) return q;
  const state = await readState(db, sensorId, q.projectId, projectIds);
  const row = state.sensor;
  if (!row) return { status: 404, body: { error: `No sensor ${sensorId}.` } };
  if ("status" in state.rule) return state.rule;
  const rule = state.rule.rule;
  const ruleProjectId = state.rule.projectId;
  const spec = sensorSpecOf(row);
  const sensor = { id: row.id, label: row.label, serial: row.serial, kind: row.kind };
  const where = selectionWhere(db, sensorId, q, projectIds);

  if (opts.rows || opts.details || q.includeShots) {
    const [list, uses] = await Promise.all([loadReportShots(sensorId, q, { details: opts.details }, db, projectIds), usesQuery(db, where)]);
    const { failed: _failed, shots: rows, ...r } = sensorReportOf(spec, rule, list, state.lastBias);
    const startedAt = new Map<string, string>();
    const defaulted = new Set<string>();
    for (const s of list) {
      if (!startedAt.has(s.sessionId)) startedAt.set(s.sessionId, s.sessionStartedAt);
      if (s.airDefaulted && !s.excluded) defaulted.add(s.sessionId);
    }
    const trace = traceabilityOf(row, startedAt, uses, state.tapeCerts, state.edmCerts);
    return { built: { status: 200, body: toJson(sensorId, rule, ruleProjectId, r, defaulted, trace, rows), sensor, rule, details: list }, kept: null };
  }

  const kept = keptOf(db);
  const key = queryKey(sensorId, q, projectIds);
  const hit = kept.get(key);
  if (hit && hit.fingerprint === state.fingerprint) {
    kept.delete(key);
    kept.set(key, hit);
    return { built: hit.built, kept: hit };
  }
  const [groupRows, sortedRows, ses, uses] = await db.batch([groupsQuery(db, where, row, rule), sortedErrorsQuery(db, where), sessionsQuery(db, sensorId), usesQuery(db, where)]);
  const startedAt = new Map(ses.map((s) => [s.id, s.startedAt] as const));
  const { groups, kE, kD } = groupsOf(groupRows, startedAt);
  const {
    failed: _failed,
    shots: _rows,
    outlier: _outlier,
    ...r
  } = reportFromAggregates({ sensor: spec, rule, aggregates: { kE, kD, groups, sortedErrors: sortedErrorsOf(sortedRows[0]) }, lastSignedOffBiasMm: state.lastBias });
  const inSelection = new Map<string, string>();
  const defaulted = new Set<string>();
  for (const g of groups) {
    inSelection.set(g.sessionId, g.sessionStartedAt);
    if (g.airDefaulted && !g.excluded) defaulted.add(g.sessionId);
  }
  const trace = traceabilityOf(row, inSelection, uses, state.tapeCerts, state.edmCerts);
  const built: Built = { status: 200, body: toJson(sensorId, rule, ruleProjectId, r, defaulted, trace, null), sensor, rule, details: [] };
  const entry: Kept = { fingerprint: state.fingerprint, built, json: null };
  kept.delete(key);
  kept.set(key, entry);
  if (kept.size > KEPT_MAX) kept.delete(kept.keys().next().value!);
  return { built, kept: entry };
}

/** The domain's report over the shots themselves (the rows path). */
function sensorReportOf(spec: ReturnType<typeof sensorSpecOf>, rule: Rule, list: readonly ReportShot[], lastBias: number | null): SensorReport {
  const { outlier, ...r } = reportFromAggregates({ sensor: spec, rule, aggregates: aggregateShots(list, spec, rule), lastSignedOffBiasMm: lastBias });
  return { ...r, shots: reportRows(list, spec, rule, outlier) };
}

const filterOf = async (actor: Actor, db: Db): Promise<ProjectFilter> => {
  const scope = await scopeOf(actor, db);
  return scope.all ? null : scope.projectIds;
};

/**
 * The report with its per-shot rows for a reader limited to `projectIds` (null: all sessions);
 * `details` adds each shot's note and target label (the CSV export). A refusal as a QueryError.
 */
export async function sensorReportFor(
  sensorId: string,
  query: ReportQuery | URLSearchParams,
  projectIds: ProjectFilter,
  opts: { details?: boolean } = {},
  db: Db = getDb(),
): Promise<BuiltWithRows | QueryError> {
  const r = await report(sensorId, query, projectIds, { rows: true, details: opts.details }, db);
  return "built" in r ? (r.built as BuiltWithRows) : r;
}

/** The report with its per-shot rows (the screens, the CSV export, sign-offs), in the actor's scope. */
export async function computeSensorReport(
  actor: Actor,
  sensorId: string,
  query: ReportQuery | URLSearchParams,
  opts: { details?: boolean; onlyProjectIds?: string[] } = {},
  db: Db = getDb(),
): Promise<BuiltWithRows | QueryError> {
  const base = await filterOf(actor, db);
  // a sign-off freezes its own project's shots only, within what the actor may see
  const only = opts.onlyProjectIds;
  const filter = only ? (base === null ? [...only] : base.filter((p) => only.includes(p))) : base;
  return sensorReportFor(sensorId, query, filter, { details: opts.details }, db);
}

const encoder = new TextEncoder();

/**
 * GET /api/sensors/:sensorId/report: the report as JSON bytes; the per-shot rows only with
 * `include=shots` (api.md v1.1). Without them the bytes are kept with the kept report.
 */
export async function sensorReportJson(actor: Actor, sensorId: string, query: ReportQuery | URLSearchParams, db: Db = getDb()): Promise<{ status: 200; json: Uint8Array<ArrayBuffer> } | QueryError> {
  const r = await report(sensorId, query, await filterOf(actor, db), {}, db);
  if (!("built" in r)) return r;
  // (a consumer that transferred a chunk's buffer would leave it empty: then it is written again)
  if (r.kept?.json && r.kept.json.byteLength > 0) return { status: 200, json: r.kept.json };
  const json = encoder.encode(JSON.stringify(r.built.body));
  if (r.kept) r.kept.json = json;
  return { status: 200, json };
}

/** Chunks of the bytes, sent as they are (views, not copies: a Uint8Array body would be copied whole). */
const CHUNK = 256 * 1024;
export function jsonBody(json: Uint8Array<ArrayBuffer>): ReadableStream<Uint8Array<ArrayBuffer>> {
  let at = 0;
  return new ReadableStream({
    pull(c) {
      if (at >= json.byteLength) return c.close();
      const end = Math.min(at + CHUNK, json.byteLength);
      c.enqueue(json.subarray(at, end));
      at = end;
    },
  });
}

/**
 * The api.md report of a sensor with its rows, for the review screens: null for an unknown
 * sensor (or one outside the actor's projects); an invalid query or unknown project throws a
 * JSON Response (400/404).
 */
export async function buildSensorReport(actor: Actor, sensorId: string, query: ReportQuery | URLSearchParams = {}): Promise<SensorReportJson | null> {
  const r = await computeSensorReport(actor, sensorId, query);
  if (r.status === 200) return r.body;
  if (r.status === 404 && r.body.error.startsWith("No sensor")) return null;
  throw Response.json(r.body, { status: r.status });
}

/**
 * The latest takenAt of a selection as an instant (offsets differ between shots): the
 * lexicographic maximum comes from the index; any later instant lies at most two local days
 * before it (offsets span −12 h to +14 h), so only those shots are compared.
 */
async function lastShotAtOf(db: Db, where: SQL[]): Promise<string | null> {
  const [top] = await db
    .select({ t: sql<string | null>`max(${shots.takenAt})` })
    .from(shots)
    .where(and(...where));
  if (!top?.t) return null;
  const day = Date.parse(`${top.t.slice(0, 10)}T00:00:00Z`);
  if (Number.isNaN(day)) return top.t;
  const from = new Date(day - 2 * 86_400_000).toISOString().slice(0, 10);
  const rows = await db
    .select({ t: shots.takenAt })
    .from(shots)
    .where(and(...where, sql`${shots.takenAt} >= ${from}`))
    .orderBy(desc(sql`julianday(${shots.takenAt})`), desc(shots.takenAt))
    .limit(1);
  return rows[0]?.t ?? top.t;
}

/** GET /api/sensors: every live sensor the actor may see, with its verdict over the shots they may see. */
export async function listSensorSummaries(
  actor: Actor,
  query: { projectId?: string } | URLSearchParams = {},
  db: Db = getDb(),
): Promise<{ status: 200; body: { sensors: SensorSummary[] } } | QueryError> {
  const projectId = query instanceof URLSearchParams ? (query.get("project") ?? undefined) : query.projectId;
  const projectIds = await filterOf(actor, db);
  let rows = await db.select().from(sensors).where(isNull(sensors.retiredAt)).orderBy(asc(sensors.label), asc(sensors.id));
  if (projectId) {
    const [p] = await db.select({ id: projects.id }).from(projects).where(eq(projects.id, projectId));
    if (!p || (projectIds && !projectIds.includes(projectId))) return { status: 404, body: { error: `No project ${projectId}.` } };
    const members = new Set((await db.select({ id: projectSensors.sensorId }).from(projectSensors).where(eq(projectSensors.projectId, projectId))).map((m) => m.id));
    rows = rows.filter((r) => members.has(r.id));
  }
  const out: SensorSummary[] = [];
  for (const row of rows) {
    const q: ReportQuery = projectId ? { projectId } : {};
    const r = await report(row.id, q, projectIds, {}, db);
    if (!("built" in r)) {
      if (r.status === 404 && r.body.error.startsWith("No sensor")) continue; // removed meanwhile, or not the actor's
      return r;
    }
    const { body } = r.built;
    let last: string | null;
    if (r.kept && r.kept.lastShotAt !== undefined) last = r.kept.lastShotAt;
    else {
      last = await lastShotAtOf(db, selectionWhere(db, row.id, q, projectIds));
      if (r.kept) r.kept.lastShotAt = last;
    }
    out.push({ id: row.id, label: row.label, kind: row.kind, verdict: body.verdict, n: body.n, biasMm: body.biasMm, rmseMm: body.rmseMm, lastShotAt: last });
  }
  return { status: 200, body: { sensors: out } };
}
