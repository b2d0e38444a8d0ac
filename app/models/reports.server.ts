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
import { and, asc, desc, eq, isNull, sql, type SQL } from "drizzle-orm";
import { getDb, type Db } from "~/db/client.server";
import { projects, projectSensors, sensors, shots } from "~/db/schema";
import { reportFromAggregates, reportRows, aggregateShots, type ReportShot, type ReportShotRow, type Rule, type SensorReport } from "~/domain";
import { appErrorOf } from "~/contract/errors";
import type { Actor } from "./actor";
import { scopeOf } from "./scope.server";
import { sensorSpecOf } from "./registry-context.server";
import type { QueryError } from "./shot-query.server";
import { toJson, traceabilityOf, type SensorReportJson, type SensorReportSummaryJson } from "./report-json";
import { loadReportShots, reportShotsPage, ROWS_PAGE, sessionsIn, type LoadedShot } from "./report-rows.server";
import { checkedQuery, queryKey, selectionWhere, type ProjectFilter, type ReportQuery } from "./report-selection.server";
import { readState, shotsStampIn } from "./report-state.server";
import { usesQuery } from "./report-sums.server";
import { buildReportJsonOffThread } from "./report-pool.server";
import { warmDomain, type BuiltJson } from "./report-build.server";
import { keptByFingerprint } from "./kept-by-fingerprint.server";

export type { ReportQuery, ProjectFilter } from "./report-selection.server";
export { parseReportQuery } from "./report-selection.server";
export type { SensorReportJson, SensorReportSummaryJson, TraceabilityEntry } from "./report-json";
export { loadReportShots } from "./report-rows.server";

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

// ---------------------------------------------------------------------------------------------
// Computed reports without rows, kept per query while their fingerprint holds (a few KB each).

type Kept = { built: Built; json: Uint8Array<ArrayBuffer> | null; lastShotAt?: string | null; outlier?: BuiltJson["outlier"] };
const kept = keptByFingerprint<Kept>(500);

/** Forgets the reports this process keeps for the database (tests and the bench; never needed for correctness). */
export function clearReportCache(db: Db = getDb()) {
  kept.clear(db);
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
  opts: { rows?: boolean; details?: boolean; streamRows?: boolean },
  db: Db,
): Promise<{ built: Built; kept: Kept | null; rowsFrom?: RowsFrom } | QueryError> {
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

  if (opts.rows || opts.details) {
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

  const key = queryKey(sensorId, q, projectIds);
  // include=shots: the figures as kept, the rows streamed after them from the shots as they were then
  const rowsFrom = (outlier: BuiltJson["outlier"]): RowsFrom | undefined =>
    q.includeShots || opts.streamRows ? { stamp: JSON.stringify(state.stamp), spec, rule, where, outlier, sensorId } : undefined;
  const hit = kept.get(db, key, state.fingerprint);
  if (hit) return { built: hit.built, kept: hit, rowsFrom: rowsFrom(hit.outlier ?? null) };
  // decision 0011: read, computed and written as JSON on a report thread; parsed here (a few KB)
  const { json, outlier } = await buildReportJsonOffThread(db, {
    sums: { sensorId, q, projectIds, tolerance: { toleranceMm: row.toleranceMm, tolerancePpm: row.tolerancePpm }, rule },
    sensor: row,
    ruleProjectId,
    lastBias: state.lastBias,
    tapeCerts: state.tapeCerts,
    edmCerts: state.edmCerts,
  });
  const built: Built = { status: 200, body: JSON.parse(decoder.decode(json)) as Built["body"], sensor, rule, details: [] };
  const entry: Kept = { built, json, outlier };
  kept.set(db, key, state.fingerprint, entry);
  return { built, kept: entry, rowsFrom: rowsFrom(outlier) };
}

/** What streaming a report's rows needs: the shots' stamp its figures were made from, and how a row is judged. */
type RowsFrom = { stamp: string; spec: ReturnType<typeof sensorSpecOf>; rule: Rule; where: SQL[]; outlier: BuiltJson["outlier"]; sensorId: string };

/** The domain's report over the shots themselves (the rows path). */
function sensorReportOf(spec: ReturnType<typeof sensorSpecOf>, rule: Rule, list: readonly ReportShot[], lastBias: number | null): SensorReport {
  const { outlier, ...r } = reportFromAggregates({ sensor: spec, rule, aggregates: aggregateShots(list, spec, rule), lastSignedOffBiasMm: lastBias });
  return { ...r, shots: reportRows(list, spec, rule, outlier) };
}

/**
 * Runs the request thread's part of a report once at start (issue 16): the state read of a
 * sensor that does not exist and the domain's figures of one made-up group, so the first real
 * report does not also compile them (measured: the domain's figures 20–28 ms cold, 4 ms warm).
 */
export async function warmReports(db: Db = getDb()): Promise<void> {
  await readState(db, "", undefined, null);
  warmDomain();
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
const decoder = new TextDecoder();

/**
 * GET /api/sensors/:sensorId/report: the report as JSON bytes; the per-shot rows only with
 * `include=shots` (api.md v1.1). Without them the bytes are kept with the kept report.
 */
export async function sensorReportJson(
  actor: Actor,
  sensorId: string,
  query: ReportQuery | URLSearchParams,
  db: Db = getDb(),
): Promise<{ status: 200; json: Uint8Array<ArrayBuffer> } | { status: 200; stream: ReadableStream<Uint8Array> } | QueryError> {
  const projectIds = await filterOf(actor, db);
  const r = await report(sensorId, query, projectIds, {}, db);
  if (!("built" in r)) return r;
  if (r.rowsFrom) {
    const json = r.kept?.json && r.kept.json.byteLength > 0 ? r.kept.json : encoder.encode(JSON.stringify(r.built.body));
    const stream = await rowsStream(r.rowsFrom, db, jsonRows(json));
    if (stream) return { status: 200, stream };
    // the shots changed between the figures and the rows' snapshot: the whole report from the shots in memory
    const whole = await report(sensorId, query, projectIds, { rows: true }, db);
    if (!("built" in whole)) return whole;
    return { status: 200, json: encoder.encode(JSON.stringify(whole.built.body)) };
  }
  // (a consumer that transferred a chunk's buffer would leave it empty: then it is written again)
  if (r.kept?.json && r.kept.json.byteLength > 0) return { status: 200, json: r.kept.json };
  const json = encoder.encode(JSON.stringify(r.built.body));
  if (r.kept) r.kept.json = json;
  return { status: 200, json };
}

let rowsPage = ROWS_PAGE;
/** Tests: a small page, so a handful of shots cross page boundaries (null: ROWS_PAGE again). */
export function setRowsPageForTests(n: number | null) {
  rowsPage = n ?? ROWS_PAGE;
}

/** How a stream of rows is written: what comes first, each page's text, what closes it. */
type RowsFormat = { head: Uint8Array; page: (rows: ReportShotRow[], shots: LoadedShot[], first: boolean) => string; tail: string; details?: boolean };

/**
 * A selection's per-shot rows streamed as `format` writes them (issue 16, decision 0013): read
 * page by page inside one read transaction of the libSQL client, so every page comes from one
 * snapshot, and only after checking that the snapshot's shots are the ones the figures were made
 * from (their stamp); null when they are not. Memory stays one page, at any n; the transaction
 * (its own connection) ends with the stream, or when the reader goes away.
 */
async function rowsStream(from: RowsFrom, db: Db, format: RowsFormat): Promise<ReadableStream<Uint8Array> | null> {
  const tx = await db.$client.transaction("read");
  let open = true;
  let sessions: { id: string; startedAt: string }[] = [];
  const close = () => {
    if (open) tx.close();
    open = false;
  };
  try {
    if ((await shotsStampIn(tx, db, from.sensorId)) !== from.stamp) {
      close();
      return null;
    }
    sessions = await sessionsIn(tx, db, from.sensorId);
  } catch (error) {
    close();
    throw error;
  }
  let after: { takenAt: string; id: string } | null = null;
  let first = true;
  let done = false;
  return new ReadableStream<Uint8Array>({
    start(c) {
      c.enqueue(format.head);
    },
    async pull(c) {
      if (done) return;
      try {
        const page = await reportShotsPage(tx, db, from.where, sessions, after, rowsPage, format.details);
        if (page.length > 0) {
          c.enqueue(encoder.encode(format.page(reportRows(page, from.spec, from.rule, from.outlier), page, first)));
          first = false;
          const last = page[page.length - 1]!;
          after = { takenAt: last.takenAt, id: last.id };
        }
        if (page.length < rowsPage) {
          done = true;
          close();
          if (format.tail) c.enqueue(encoder.encode(format.tail));
          c.close();
        }
      } catch (error) {
        close();
        c.error(error);
      }
    },
    cancel() {
      close();
    },
  });
}

/** The report's JSON with its rows: the figures' JSON ends with "}", the rows go in before it, as the last key (where toJson puts them). */
const jsonRows = (figures: Uint8Array<ArrayBuffer>): RowsFormat => ({
  head: Uint8Array.from([...figures.subarray(0, figures.byteLength - 1), ...encoder.encode(`,"shots":[`)]),
  page: (rows, _shots, first) => (first ? "" : ",") + JSON.stringify(rows).slice(1, -1),
  tail: "]}",
});

/**
 * A sensor's per-shot rows as text, streamed (the CSV export): `head` first, then each page of
 * rows (with each shot's note and target label) as `page` writes it. Null when the shots changed
 * between the figures and the rows' snapshot: the caller builds it from the shots in memory.
 */
export async function sensorRowsStream(
  actor: Actor,
  sensorId: string,
  query: ReportQuery | URLSearchParams,
  format: { head: string; page: (rows: ReportShotRow[], shots: LoadedShot[]) => string },
  db: Db = getDb(),
): Promise<{ status: 200; stream: ReadableStream<Uint8Array> | null; sensor: Built["sensor"] } | QueryError> {
  const r = await report(sensorId, query, await filterOf(actor, db), { streamRows: true }, db);
  if (!("built" in r)) return r;
  const stream = r.rowsFrom ? await rowsStream(r.rowsFrom, db, { head: encoder.encode(format.head), page: format.page, tail: "", details: true }) : null;
  return { status: 200, stream, sensor: r.built.sensor };
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
 * sensor (or one outside the actor's projects); an invalid query or unknown project throws an
 * AppError (400/404, api.md's body; the route answers with it).
 */
export async function buildSensorReport(actor: Actor, sensorId: string, query: ReportQuery | URLSearchParams = {}): Promise<SensorReportJson | null> {
  const r = await computeSensorReport(actor, sensorId, query);
  if (r.status === 200) return r.body;
  if (r.status === 404 && r.body.error.startsWith("No sensor")) return null;
  throw appErrorOf(r);
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

/**
 * The report without its rows (kept while its fingerprint holds): the figures and the verdict,
 * for the failed-verdict notice after each sync. null for an unknown sensor.
 */
export async function sensorReportSummary(actor: Actor, sensorId: string, db: Db = getDb()): Promise<SensorReportSummaryJson | null> {
  const r = await report(sensorId, {}, await filterOf(actor, db), {}, db);
  if ("built" in r) return r.built.body;
  if (r.status === 404 && r.body.error.startsWith("No sensor")) return null;
  throw appErrorOf(r);
}
