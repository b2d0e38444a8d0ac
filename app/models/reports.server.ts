// Sensor reports (api.md GET /api/sensors/:sensorId/report) and the sensor overview: the stored
// computed shots of a selection through the domain's sensorReport, with the rule of the chosen
// project (it recomputes each shot's limit and within with that rule's coverage factor).
//
// Speed: a sensor's report rows (all its shots) are kept in this process, and so are the
// computed report and its JSON bytes per query. Every request first reads a fingerprint of
// everything a report depends on, in one read transaction (see readState): the sensor row
// itself, the rule's project row, the last approved sign-off's bias, and of the sensor's shots
// their count and rowids (index only), their exclusions (rows are never deleted; a restore
// fills restored_at) and the recomputation marks recomputeWhere writes with its updates. A
// cached copy is used only when its fingerprint is the one just read, so several app
// instances on one database never serve each other's stale figures. Shots appended since
// (a sync) and changed exclusions are patched in without reloading the rest.
import { and, asc, desc, eq, gt, inArray, isNull, sql, type SQL } from "drizzle-orm";
import { getDb, type Db } from "~/db/client.server";
import { auditLog, checkSessions, edms, exclusions, projects, projectSensors, sensors, shots, signOffs, tapes, targets } from "~/db/schema";
import { DEFAULT_RULE, inPeriod, pastDueOn, sensorReport, type ReportShot, type Rule, type SensorReport } from "~/domain";
import { inIds, periodDay, periodWhere, RECOMPUTE_ACTION, RULE_COLUMNS, ruleOf, sensorSpecOf, type QueryError } from "./shots.server";
import type { Actor } from "./actor";
// issue 14 (a14s): project scoping — a minimal change marked "issue 14 scope" below, for the lead to carry onto h16r's rewrite
import { canSeeProject, canSeeSensor, scopeOf, scopeProjectIds, sensorIdInScope } from "./scope.server";
import type { RecordError } from "./sync-schemas";

export type ReportQuery = { from?: string; to?: string; sessionIds?: string[]; projectId?: string };

/** issue 15: a certificate behind the report and the sessions it was past due on (ranging.md §7). */
export type TraceabilityEntry = { kind: "sensor" | "tape" | "edm"; id: string; label: string; number: string | null; laboratory: string | null; issued: string | null; due: string | null; expiredOnSessions: string[] };

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

/** from, to (YYYY-MM-DD), session (repeatable), project of GET …/report and …/report.csv. */
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

// ---------------------------------------------------------------------------------------------
// Loading the rows: one query, one text value per column.

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

const sessionsQuery = (db: Db, sensorId: string) =>
  db.select({ id: checkSessions.id, startedAt: checkSessions.startedAt }).from(checkSessions).where(eq(checkSessions.sensorId, sensorId));

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
    const r = ref[i], g = range[i], e = err[i], q = rep[i], f = refl[i], l = lux[i], b = bits[i], u = unc[i];
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
  for (let i = 0; i < list.length; ) {
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

/** Two lists in (takenAt, id) order → one. */
function mergeInOrder(a: ReportShot[], b: ReportShot[]): ReportShot[] {
  if (!b.length) return a;
  if (!a.length) return b;
  const out: ReportShot[] = new Array(a.length + b.length);
  let i = 0;
  let j = 0;
  let k = 0;
  while (i < a.length && j < b.length) out[k++] = byTimeThenId(a[i]!, b[j]!) <= 0 ? a[i++]! : b[j++]!;
  while (i < a.length) out[k++] = a[i++]!;
  while (j < b.length) out[k++] = b[j++]!;
  return out;
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

function selectionWhere(sensorId: string, q: ReportQuery, scopeSessions: readonly string[] | null = null): SQL[] {
  const where = [eq(shots.sensorId, sensorId), ...periodWhere(q.from, q.to)];
  if (q.sessionIds?.length) where.push(inArray(shots.sessionId, q.sessionIds));
  // issue 14 scope: only the shots of sessions of the reader's projects
  if (scopeSessions) where.push(inIds(shots.sessionId, scopeSessions));
  return where;
}

/** The selection's shots, read from the database (no cache), in time order (takenAt, then id). */
export async function loadReportShots(
  sensorId: string,
  q: ReportQuery,
  opts: { details?: boolean } = {},
  db: Db = getDb(),
  scopeSessions: readonly string[] | null = null,
): Promise<LoadedShot[]> {
  const where = selectionWhere(sensorId, q, scopeSessions);
  if (!opts.details) {
    const [ses, packed] = await db.batch([sessionsQuery(db, sensorId), packedQuery(db, where)]);
    const list = unpack(packed[0], ses);
    if (list) return inTimeOrder(list);
    // a value needed escaping (not possible for synced records): the plain query
  }
  return plainQuery(db, where);
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
const sameStamp = (a: ShotsStamp, b: ShotsStamp) =>
  a.maxRowid === b.maxRowid && a.exclusions === b.exclusions && a.restored === b.restored && a.recomputes === b.recomputes && a.lastRecompute === b.lastRecompute;

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
  sensor: typeof sensors.$inferSelect | undefined;
  rule: { rule: Rule; projectId: string | null } | QueryError;
  tapeCerts: CertRow[];
  edmCerts: CertRow[];
  lastBias: number | null;
  stamp: ShotsStamp;
  /** Everything above as one string: the cached report of a query is good while it is unchanged. */
  fingerprint: string;
};

/**
 * One read transaction: the sensor, the rule of the report (the chosen project's; without one,
 * the project's when the sensor belongs to exactly one live project, else the default rule of
 * ranging.md §6), the bias of the last approved sign-off (drift) and the stamp of the shots.
 */
async function readState(db: Db, sensorId: string, projectId: string | undefined, projectIds: string[] | null = null): Promise<State> {
  const [sensorRows, ruleRows, biasRows, tapeCerts, edmCerts, ...stamps] = await db.batch([
    db.select().from(sensors).where(eq(sensors.id, sensorId)),
    db
      .select(ruleCols)
      .from(projects)
      .where(
        projectId
          ? eq(projects.id, projectId)
          : and(
              isNull(projects.retiredAt),
              inArray(projects.id, db.select({ id: projectSensors.projectId }).from(projectSensors).where(eq(projectSensors.sensorId, sensorId))),
              // issue 14 scope: api.md v1.1 — the reader's only project holding the sensor
              projectIds ? inIds(projects.id, projectIds) : undefined,
            ),
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
  const sensor = sensorRows[0];
  // the certificates are part of the report (traceability): an edit to one is a new report
  return {
    sensor,
    rule,
    tapeCerts,
    edmCerts,
    lastBias,
    stamp,
    fingerprint: JSON.stringify([sensor, "rule" in rule ? [rule.rule, rule.projectId] : null, lastBias, stamp, tapeCerts, edmCerts]),
  };
}

// ---------------------------------------------------------------------------------------------
// The in-process cache, one per database handle.

/** Shots kept as loaded rows across all sensors (about 250 bytes each: some 100 MB at most). */
const ROWS_BUDGET = 400_000;
/** Shot rows kept in computed reports across all queries (about 150 bytes each). */
const REPORT_ROWS_BUDGET = 300_000;
/** Bytes of report JSON kept (100 000 shots make some 33 MB). */
const JSON_BUDGET = 96 * 1024 * 1024;

type RowsEntry = { born: string; stamp: ShotsStamp; shots: readonly ReportShot[] };
type ReportEntry = { fingerprint: string; built: Built; json: Uint8Array<ArrayBuffer> | null; lastShotAt?: string | null };
type Appended = { rowid: number; shot: ReportShot };
type Caches = { rows: Map<string, RowsEntry>; reports: Map<string, ReportEntry>; appended: Map<string, Appended[]>; uses: Map<string, UsesEntry> };
/** issue 15: which tape or EDM each (session, day) of a sensor used; changes only with new or recomputed shots. */
type Use = { sessionId: string; tapeId: string | null; edmId: string | null; day: string };
type UsesEntry = { key: string; uses: Use[] };
const cachesByDb = new WeakMap<Db, Caches>();

function cachesOf(db: Db): Caches {
  let c = cachesByDb.get(db);
  if (!c) cachesByDb.set(db, (c = { rows: new Map(), reports: new Map(), appended: new Map(), uses: new Map() }));
  return c;
}

/** Least recently used first out, until the map's total is within the budget. */
function evict<V>(map: Map<string, V>, size: (v: V) => number, budget: number) {
  let total = 0;
  for (const v of map.values()) total += size(v);
  for (const [k, v] of map) {
    if (total <= budget) break;
    map.delete(k);
    total -= size(v);
  }
}
function touch<V>(map: Map<string, V>, key: string, v: V) {
  map.delete(key);
  map.set(key, v);
}

/** Rows held for one sensor at most: more, and they are read back instead. */
const APPENDED_MAX = 20_000;

/**
 * The shots this process has just written (the sync), with their rowids, so the next report
 * of the sensor need not read them back. They are used only when the database confirms they
 * are all of the sensor's rows after the kept ones (another instance may have written more).
 */
export function noteAppendedShots(db: Db, bySensor: Map<string, Appended[]>) {
  const caches = cachesOf(db);
  for (const [sensorId, rows] of bySensor) {
    if (!caches.rows.has(sensorId)) continue; // nothing kept to add them to
    const list = caches.appended.get(sensorId) ?? [];
    for (const r of rows) list.push({ rowid: r.rowid, shot: Object.freeze(r.shot) });
    if (list.length > APPENDED_MAX) caches.appended.delete(sensorId);
    else caches.appended.set(sensorId, list);
  }
}

/** Drops everything this process keeps for the database (tests; never needed for correctness). */
export function clearReportCache(db: Db = getDb()) {
  cachesByDb.delete(db);
}

/**
 * All shots of the sensor as of `stamp` (or newer), in time order: the kept rows when their
 * stamp is this one; the kept rows plus the shots appended since and the exclusion flags of
 * the shots that have exclusion rows, when only those changed; else everything read again.
 * `fresh` tells whether the rows match the given stamp (so a report of them may be kept).
 */
async function sensorRows(db: Db, caches: Caches, sensorId: string, born: string, stamp: ShotsStamp): Promise<{ shots: readonly ReportShot[]; fresh: boolean }> {
  const have = caches.rows.get(sensorId);
  if (have && have.born === born && sameStamp(have.stamp, stamp)) {
    touch(caches.rows, sensorId, have);
    return { shots: have.shots, fresh: true };
  }
  let next: RowsEntry | null = null;
  if (have && have.born === born && have.stamp.recomputes === stamp.recomputes && have.stamp.lastRecompute === stamp.lastRecompute && stamp.maxRowid >= have.stamp.maxRowid) {
    const after = have.stamp.maxRowid;
    const exclusionsChanged = have.stamp.exclusions !== stamp.exclusions || have.stamp.restored !== stamp.restored;
    const pending = (caches.appended.get(sensorId) ?? []).filter((p) => p.rowid > after);
    caches.appended.delete(sensorId);
    // "+sensor_id" keeps SQLite off the sensor index: the rows after the kept rowid, walked by rowid
    const appended = [sql`+${shots.sensorId} = ${sensorId}`, gt(sql`${shots}.rowid`, after)];
    const [a, b, c, count, added, ses, packed, flags] = await db.batch([
      ...stampQueries(db, sensorId),
      db.select({ n: sql<number>`count(*)` }).from(shots).where(eq(shots.sensorId, sensorId)),
      db.select({ n: sql<number>`count(*)` }).from(shots).where(and(...appended)),
      sessionsQuery(db, sensorId),
      // the rows written by this process are at hand: read the appended rows only without them
      packedQuery(db, pending.length ? [sql`0`] : appended),
      // every shot of the sensor that ever had an exclusion row: the only way its flag changes
      db
        .selectDistinct({ id: shots.id, excluded: shots.excluded })
        .from(exclusions)
        .crossJoin(shots)
        .where(and(eq(shots.id, exclusions.shotId), eq(shots.sensorId, sensorId), exclusionsChanged ? undefined : sql`0`)),
    ]);
    const now = stampOf([a, b, c] as StampRows);
    let inc: ReportShot[] | null;
    if (!pending.length) inc = unpack(packed[0], ses);
    else if (pending.length === Number(added[0]?.n ?? -1) && pending.every((p) => p.rowid <= now.maxRowid)) inc = pending.map((p) => p.shot);
    else {
      // someone else wrote shots of this sensor too: read the appended rows, up to the stamp's rowid
      const [ses2, packed2] = await db.batch([sessionsQuery(db, sensorId), packedQuery(db, [...appended, sql`${shots}.rowid <= ${now.maxRowid}`])]);
      inc = unpack(packed2[0], ses2);
    }
    if (
      inc &&
      now.recomputes === have.stamp.recomputes &&
      now.lastRecompute === have.stamp.lastRecompute &&
      (exclusionsChanged || (now.exclusions === have.stamp.exclusions && now.restored === have.stamp.restored)) &&
      // only appends since: the kept rows and the new ones are all the sensor's shots
      have.shots.length + inc.length === Number(count[0]?.n ?? -1)
    ) {
      let list = have.shots as ReportShot[];
      if (exclusionsChanged) {
        const flag = new Map(flags.map((f) => [f.id, f.excluded] as const));
        list = list.map((s) => {
          const x = flag.get(s.id);
          return x === undefined || x === s.excluded ? s : Object.freeze({ ...s, excluded: x });
        });
      }
      next = { born, stamp: now, shots: mergeInOrder(list, inTimeOrder(inc)) };
    }
  }
  if (!next) {
    const where = [eq(shots.sensorId, sensorId)];
    const [a, b, c, ses, packed] = await db.batch([...stampQueries(db, sensorId), sessionsQuery(db, sensorId), packedQuery(db, where)]);
    const now = stampOf([a, b, c] as StampRows);
    const list = unpack(packed[0], ses);
    // a value that needed escaping (not possible for synced records): the plain query, not kept
    if (!list) return { shots: await plainQuery(db, where), fresh: false };
    next = { born, stamp: now, shots: inTimeOrder(list) };
  }
  Object.freeze(next.shots);
  caches.rows.delete(sensorId);
  if (next.shots.length <= ROWS_BUDGET) {
    caches.rows.set(sensorId, next);
    evict(caches.rows, (e) => e.shots.length, ROWS_BUDGET);
  }
  return { shots: next.shots, fresh: sameStamp(next.stamp, stamp) };
}

function selectShots(all: readonly ReportShot[], q: ReportQuery, scopeSessions: ReadonlySet<string> | null = null): ReportShot[] {
  if (!q.from && !q.to && !q.sessionIds?.length && !scopeSessions) return all as ReportShot[];
  const ses = q.sessionIds?.length ? new Set(q.sessionIds) : null;
  const from = q.from ? periodDay(q.from) : null;
  const to = q.to ? periodDay(q.to) : null;
  // the period of ranging.md: the shot's own calendar date, as the SQL of periodWhere reads it
  return all.filter((s) => (!ses || ses.has(s.sessionId)) && (!scopeSessions || scopeSessions.has(s.sessionId)) && inPeriod(s.takenAt, from, to));
}

/** A cached report is shared: nothing may change it in place. */
function freezeReport(body: SensorReportJson) {
  for (const list of [body.tests, body.byReflectance, body.byIlluminance, body.byRange, body.drift, body.coverage.missing, body.shots]) {
    for (const x of list as object[]) Object.freeze(x);
    Object.freeze(list);
  }
  for (const s of body.shots) Object.freeze(s.flags);
  if (body.biasCi95Mm) Object.freeze(body.biasCi95Mm);
  Object.freeze(body.airDefaulted);
  for (const t of body.traceability) {
    Object.freeze(t.expiredOnSessions);
    Object.freeze(t);
  }
  Object.freeze(body.traceability);
  Object.freeze(body.coverage);
  Object.freeze(body.rule);
  Object.freeze(body);
}

// ---------------------------------------------------------------------------------------------
// The report.

function toJson(sensorId: string, rule: Rule, ruleProjectId: string | null, r: SensorReport, shotsIn: readonly ReportShot[], traceability: TraceabilityEntry[]): SensorReportJson {
  const defaulted = new Set<string>();
  for (const s of shotsIn) if (s.airDefaulted && !s.excluded) defaulted.add(s.sessionId);
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
    shots: r.shots,
  };
}

/**
 * ranging.md §7 traceability: the sensor when it has a certificate; each tape or reference EDM
 * any shot of the selection used, with the sessions whose own date was after its due date.
 * Uses of a tape or EDM are read per (session, day) from the raw records: a few rows per session.
 */
/**
 * The (session, day, tape, EDM) uses of all the sensor's shots, read once per state of its shots
 * (new or recomputed shots; exclusions do not change them) and filtered per selection in memory.
 */
async function usesOf(db: Db, sensor: typeof sensors.$inferSelect, stamp: ShotsStamp | null): Promise<Use[]> {
  const caches = cachesOf(db);
  const key = stamp ? JSON.stringify([sensor.createdAt, stamp.maxRowid, stamp.recomputes, stamp.lastRecompute]) : null;
  const have = caches.uses.get(sensor.id);
  if (key && have && have.key === key) return have.uses;
  const tapeId = sql<string | null>`json_extract(${shots.raw}, '$.reference.tape.tapeId')`;
  const edmId = sql<string | null>`json_extract(${shots.raw}, '$.reference.edmId')`;
  const day = sql<string>`substr(${shots.takenAt}, 1, 10)`;
  const uses = await db
    .select({ sessionId: shots.sessionId, tapeId, edmId, day })
    .from(shots)
    .where(and(eq(shots.sensorId, sensor.id), inArray(shots.referenceMethod, ["tape", "edm"])))
    .groupBy(shots.sessionId, tapeId, edmId, day);
  // (max rowid over the whole table: a shot written meanwhile only makes the key stale, never wrong)
  if (key) {
    caches.uses.delete(sensor.id);
    caches.uses.set(sensor.id, { key, uses });
    if (caches.uses.size > 1000) caches.uses.delete(caches.uses.keys().next().value!);
  }
  return uses;
}

async function traceabilityOf(
  db: Db,
  sensor: typeof sensors.$inferSelect,
  stamp: ShotsStamp | null,
  q: ReportQuery,
  selection: readonly ReportShot[],
  tapeCerts: CertRow[],
  edmCerts: CertRow[],
): Promise<TraceabilityEntry[]> {
  const startedAt = new Map<string, string>();
  for (const s of selection) if (!startedAt.has(s.sessionId)) startedAt.set(s.sessionId, s.sessionStartedAt);
  const expired = (due: string | null, ids: Iterable<string>) =>
    [...ids].filter((id) => pastDueOn(due, startedAt.get(id) ?? "")).sort((a, b) => (startedAt.get(a)! < startedAt.get(b)! ? -1 : 1));
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
  if (!selection.length) return out;
  const from = q.from ? periodDay(q.from) : null;
  const to = q.to ? periodDay(q.to) : null;
  const used = { tape: new Map<string, Set<string>>(), edm: new Map<string, Set<string>>() };
  for (const u of await usesOf(db, sensor, stamp)) {
    // the selection's sessions (startedAt holds them) and its period, by the shot's own day
    if (!startedAt.has(u.sessionId) || !inPeriod(u.day, from, to)) continue;
    for (const [kind, id] of [["tape", u.tapeId], ["edm", u.edmId]] as const) {
      if (!id) continue;
      if (!used[kind].has(id)) used[kind].set(id, new Set());
      used[kind].get(id)!.add(u.sessionId);
    }
  }
  for (const [kind, certs] of [["tape", tapeCerts], ["edm", edmCerts]] as const) {
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

type Built = { status: 200; body: SensorReportJson; sensor: { id: string; label: string; serial: string; kind: "pulsed" | "cw" }; rule: Rule; details: LoadedShot[] };

const queryKey = (sensorId: string, q: ReportQuery) =>
  JSON.stringify([sensorId, q.from ? periodDay(q.from) : null, q.to ? periodDay(q.to) : null, [...new Set(q.sessionIds ?? [])].sort(), q.projectId ?? null]);

function checkedQuery(query: ReportQuery | URLSearchParams): ReportQuery | QueryError {
  const q = query instanceof URLSearchParams ? parseReportQuery(query) : query;
  if ("status" in q) return q;
  for (const key of ["from", "to"] as const) {
    const v = q[key];
    if (v && !periodDay(v)) return { status: 400, body: { error: "Invalid query.", errors: [{ path: key, message: `${key} must be a date (YYYY-MM-DD)` }] } };
  }
  return q;
}

/** issue 14 scope: the sensor's sessions that belong to these projects (sorted). */
async function sessionsInProjects(db: Db, sensorId: string, projectIds: string[]): Promise<string[]> {
  const rows = await db
    .select({ id: checkSessions.id })
    .from(checkSessions)
    .where(and(eq(checkSessions.sensorId, sensorId), inIds(checkSessions.projectId, projectIds)));
  return rows.map((r) => r.id).sort();
}

/**
 * The report and, when it may be kept, its cache entry. issue 14 scope: `projectIds` limits the
 * shots to those of sessions of these projects (null: all — admins).
 */
async function report(
  sensorId: string,
  query: ReportQuery | URLSearchParams,
  opts: { details?: boolean },
  db: Db,
  projectIds: string[] | null = null,
): Promise<{ built: Built; entry: ReportEntry | null } | QueryError> {
  const q = checkedQuery(query);
  if ("status" in q) return q;
  const state = await readState(db, sensorId, q.projectId, projectIds);
  const scopeList = projectIds ? await sessionsInProjects(db, sensorId, projectIds) : null;
  const scopeSessions = scopeList ? new Set(scopeList) : null;
  const row = state.sensor;
  if (!row) return { status: 404, body: { error: `No sensor ${sensorId}.` } };
  if ("status" in state.rule) return state.rule;
  const rule = state.rule.rule;
  const ruleProjectId = state.rule.projectId;
  const sensor = { id: row.id, label: row.label, serial: row.serial, kind: row.kind };
  const compute = async (list: readonly ReportShot[]): Promise<Built> => {
    const r = sensorReport({ sensor: sensorSpecOf(row), rule, shots: list as ReportShot[], lastSignedOffBiasMm: state.lastBias });
    const trace = await traceabilityOf(db, row, state.stamp, q, list, state.tapeCerts, state.edmCerts);
    return { status: 200, body: toJson(sensorId, rule, ruleProjectId, r, list, trace), sensor, rule, details: list as LoadedShot[] };
  };
  // note and target label per shot (the CSV export): read as they are, not kept
  if (opts.details) return { built: await compute(await loadReportShots(sensorId, q, opts, db, scopeList)), entry: null };

  const caches = cachesOf(db);
  const key = queryKey(sensorId, q) + (scopeList ? JSON.stringify(scopeList) : "");
  const hit = caches.reports.get(key);
  if (hit && hit.fingerprint === state.fingerprint) {
    touch(caches.reports, key, hit);
    return { built: hit.built, entry: hit };
  }
  const rows = await sensorRows(db, caches, sensorId, row.createdAt, state.stamp);
  const built = await compute(selectShots(rows.shots, q, scopeSessions));
  caches.reports.delete(key);
  if (!rows.fresh) return { built, entry: null }; // the shots moved on meanwhile: the next request computes afresh
  freezeReport(built.body);
  Object.freeze(built.details);
  const entry: ReportEntry = { fingerprint: state.fingerprint, built, json: null };
  caches.reports.set(key, entry);
  evict(caches.reports, (e) => e.built.body.shots.length + 1, REPORT_ROWS_BUDGET);
  return { built, entry };
}

/**
 * The report with what the CSV export and the screens need beside it; a refusal as a QueryError.
 * The body may be shared with other requests: read it, never change it.
 */
/**
 * issue 14 scope: what the actor may read of the sensor's report — 404 (as for an unknown
 * sensor or project) outside their projects, else the projects whose shots it covers (null: all).
 * `only` narrows it further (a sign-off covers the shots of its own project).
 */
async function reportScope(actor: Actor, sensorId: string, query: ReportQuery | URLSearchParams, db: Db, only?: string[]): Promise<{ projectIds: string[] | null } | QueryError> {
  const scope = await scopeOf(actor, db);
  if (!(await canSeeSensor(scope, sensorId, db))) return { status: 404, body: { error: `No sensor ${sensorId}.` } };
  const projectId = query instanceof URLSearchParams ? query.get("project") : query.projectId;
  if (projectId && !(await canSeeProject(scope, projectId, db))) return { status: 404, body: { error: `No project ${projectId}.` } };
  const mine = scopeProjectIds(scope);
  return { projectIds: only ? (mine ? only.filter((p) => mine.includes(p)) : only) : mine };
}

export async function computeSensorReport(
  actor: Actor,
  sensorId: string,
  query: ReportQuery | URLSearchParams,
  opts: { details?: boolean; onlyProjectIds?: string[] } = {},
  db: Db = getDb(),
): Promise<Built | QueryError> {
  const sc = await reportScope(actor, sensorId, query, db, opts.onlyProjectIds);
  if ("status" in sc) return sc;
  const r = await report(sensorId, query, { details: opts.details }, db, sc.projectIds);
  return "built" in r ? r.built : r;
}

const encoder = new TextEncoder();

/** GET /api/sensors/:sensorId/report: the report as JSON bytes (kept with the cached report). */
export async function sensorReportJson(actor: Actor, sensorId: string, query: ReportQuery | URLSearchParams, db: Db = getDb()): Promise<{ status: 200; json: Uint8Array<ArrayBuffer> } | QueryError> {
  const sc = await reportScope(actor, sensorId, query, db);
  if ("status" in sc) return sc;
  const r = await report(sensorId, query, {}, db, sc.projectIds);
  if (!("built" in r)) return r;
  // (a consumer that transferred a chunk's buffer would leave it empty: then it is written again)
  if (r.entry?.json && r.entry.json.byteLength > 0) return { status: 200, json: r.entry.json };
  const json = encoder.encode(JSON.stringify(r.built.body));
  if (r.entry && json.byteLength <= JSON_BUDGET) {
    r.entry.json = json;
    evict(cachesOf(db).reports, (e) => (e.json ? e.json.byteLength : 0), JSON_BUDGET);
  }
  return { status: 200, json };
}

/** Chunks of the kept bytes, sent as they are (views, not copies: a Uint8Array body would be copied whole). */
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
 * The api.md report of a sensor for the review screens: null for an unknown sensor; an invalid
 * query or unknown project throws a JSON Response (400/404).
 */
export async function buildSensorReport(actor: Actor, sensorId: string, query: ReportQuery | URLSearchParams = {}): Promise<SensorReportJson | null> {
  const r = await computeSensorReport(actor, sensorId, query);
  if (r.status === 200) return r.body;
  if (r.status === 404 && r.body.error.startsWith("No sensor")) return null;
  throw Response.json(r.body, { status: r.status });
}

function lastShotAtOf(list: readonly ReportShot[]): string | null {
  let last: string | null = null;
  let lastT = -Infinity;
  for (const s of list) {
    const t = Date.parse(s.takenAt);
    if (t > lastT) {
      lastT = t;
      last = s.takenAt;
    }
  }
  return last;
}

/** GET /api/sensors: every live sensor with its verdict over all its shots. */
export async function listSensorSummaries(actor: Actor, query: { projectId?: string } | URLSearchParams = {}, db: Db = getDb()): Promise<{ status: 200; body: { sensors: SensorSummary[] } } | QueryError> {
  const projectId = query instanceof URLSearchParams ? (query.get("project") ?? undefined) : query.projectId;
  // issue 14 scope: the sensors of the reader's projects; another project answers as an unknown one
  const scope = await scopeOf(actor, db);
  const projectIds = scopeProjectIds(scope);
  let rows = await db
    .select()
    .from(sensors)
    .where(and(isNull(sensors.retiredAt), sensorIdInScope(scope, sensors.id)))
    .orderBy(asc(sensors.label), asc(sensors.id));
  if (projectId) {
    const p = await canSeeProject(scope, projectId, db);
    if (!p) return { status: 404, body: { error: `No project ${projectId}.` } };
    const members = new Set((await db.select({ id: projectSensors.sensorId }).from(projectSensors).where(eq(projectSensors.projectId, projectId))).map((m) => m.id));
    rows = rows.filter((r) => members.has(r.id));
  }
  const out: SensorSummary[] = [];
  for (const row of rows) {
    const r = await report(row.id, projectId ? { projectId } : {}, {}, db, projectIds);
    if (!("built" in r)) {
      if (r.status === 404 && r.body.error.startsWith("No sensor")) continue; // removed meanwhile
      return r;
    }
    const { body, details } = r.built;
    let last: string | null;
    if (r.entry && r.entry.lastShotAt !== undefined) last = r.entry.lastShotAt;
    else {
      last = lastShotAtOf(details);
      if (r.entry) r.entry.lastShotAt = last;
    }
    out.push({ id: row.id, label: row.label, kind: row.kind, verdict: body.verdict, n: body.n, biasMm: body.biasMm, rmseMm: body.rmseMm, lastShotAt: last });
  }
  return { status: 200, body: { sensors: out } };
}
