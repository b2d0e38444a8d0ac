// issue 16: what the QA report page draws, computed where the shots are. The page asks the
// report without its rows (api.md v1.1) and this for its charts and its "why this verdict":
// - the error-against-distance series of app/domain/series.ts (every notable shot, a
//   deterministic sample of the others per distance bin, and their spread per bin);
// - the reflectance × illuminance cells (count, mean error, outside count);
// - the included shots' totals and the flagged included shots, all explainVerdict needs.
// One query reads the selection's few columns, each packed into one text value (a first version
// ran nine grouped and windowed queries: nine reads of the wide shots table, 2.6 s of server CPU
// at 100,000 shots on the shared machine); app/domain computes everything from them.
// The selection, the rule and the limit k·(a + b·D/1000) are the report's own (reports.server),
// so every number here agrees with the report's figures.
import { and, eq, inArray, isNull, sql, type SQL } from "drizzle-orm";
import { getDb, type Db } from "~/db/client.server";
import { projects, projectSensors, shots } from "~/db/schema";
import {
  DEFAULT_RULE,
  OUTLIER_K,
  MAD_TO_SIGMA,
  orderStatistics,
  rowId,
  seriesOfColumns,
  SERIES_BINS,
  SERIES_MAX_NOTABLE,
  SERIES_PER_BIN,
  type ErrorSeries,
  type IncludedTotals,
  type ShotFlag,
} from "~/domain";
import type { MatrixCell } from "~/contract/report-matrix";
import type { Actor } from "./actor";
import { parseReportQuery, type ReportQuery } from "./reports.server";
import { queryKey } from "./report-selection.server";
import { readState } from "./report-state.server";
import { canSeeProject, canSeeSensor, projectColInScope, scopeOf, sessionIdInScope, visibleSessionIds, type Scope } from "./scope.server";
import { periodWhere, type QueryError } from "./shot-query.server";
import { keptByFingerprint } from "./kept-by-fingerprint.server";

export type FlaggedRow = { id: string; errorMm: number; limitMm: number; within: boolean; excluded: false; flags: ShotFlag[] };

export type ReportSeriesJson = {
  sensorId: string;
  ruleProjectId: string | null;
  coverageK: number;
  /** The median and cut of the outlier rule (ranging.md §4) over the included shots; null without any. */
  outlier: { medianMm: number; cutMm: number } | null;
  errorSeries: ErrorSeries & { limitLine: { d: number; lim: number }[] };
  cells: MatrixCell[];
  explain: { included: IncludedTotals; flagged: FlaggedRow[] };
};

/** The report's rule for this reader: the chosen project's, else their only live project of the sensor's, else the default. */
async function ruleFor(db: Db, scope: Scope, sensorId: string, projectId: string | undefined): Promise<{ k: number; projectId: string | null } | QueryError> {
  if (projectId) {
    if (!(await canSeeProject(scope, projectId, db))) return { status: 404, body: { error: `No project ${projectId}.` } };
    const [p] = await db.select({ k: projects.coverageK }).from(projects).where(eq(projects.id, projectId));
    return p ? { k: p.k, projectId } : { status: 404, body: { error: `No project ${projectId}.` } };
  }
  const rows = await db
    .select({ id: projects.id, k: projects.coverageK })
    .from(projects)
    .where(
      and(
        isNull(projects.retiredAt),
        projectColInScope(scope, projects.id),
        inArray(projects.id, db.select({ id: projectSensors.projectId }).from(projectSensors).where(eq(projectSensors.sensorId, sensorId))),
      ),
    )
    .limit(2);
  return rows.length === 1 ? { k: rows[0]!.k, projectId: rows[0]!.id } : { k: DEFAULT_RULE.coverageK, projectId: null };
}

/**
 * The selection's columns, each as ONE text value for all its shots (the local client builds a JS
 * object per row and column, which costs seconds at 100,000 shots; a JSON.parse per column costs
 * a fraction). Only columns of the index shots_sensor_error and the row number, so SQLite reads
 * the index, never the wide rows (which carry the raw record): 0.17 s against 0.9 s of CPU at
 * 100,000. %!.17g reads every double back bit for bit; bits packs excluded and retro.
 */
function packedColumns(db: Db, where: SQL) {
  const exactOrNull = (col: unknown) => sql`CASE WHEN ${col} IS NULL THEN 'null' ELSE printf('%!.17g', ${col}) END`;
  return db.all<{ rn: string | null; d: string | null; e: string | null; bits: string | null; rp: string | null; lux: string | null; n: number }>(sql`
    SELECT group_concat(${shots}.rowid) AS rn,
           group_concat(printf('%!.17g', ${shots.referenceM})) AS d,
           group_concat(printf('%!.17g', ${shots.errorMm})) AS e,
           group_concat(${shots.excluded} + 4 * ${shots.retro}) AS bits,
           group_concat(${exactOrNull(shots.reflectancePct)}) AS rp,
           group_concat(${exactOrNull(shots.illuminanceKlux)}) AS lux,
           count(*) AS n
    FROM ${shots} WHERE ${where}`);
}

/** The row numbers of the selection's wrapped shots, from the partial index shots_sensor_wrap. */
function wrappedRows(db: Db, where: SQL) {
  return db.all<{ rn: number }>(sql`SELECT ${shots}.rowid AS rn FROM ${shots} WHERE ${where} AND ${shots.wrap} = 1`);
}

const list = (text: string | null | undefined) => (text ? (JSON.parse(`[${text}]`) as (number | null)[]) : []);

/**
 * The series, cells and explanation of a report selection (the query of GET …/report: from, to,
 * session, project), in the reader's scope: outside it the sensor, a session or the project
 * answers 404 as unknown.
 */
/** Sizes of the series (the defaults of app/domain/series.ts; tests make them small to see the sampling). */
export type SeriesSizes = { bins?: number; perBin?: number; maxNotable?: number };

export async function reportSeries(actor: Actor, sensorId: string, params: URLSearchParams, db: Db = getDb(), sizes: SeriesSizes = {}): Promise<{ status: 200; body: ReportSeriesJson } | QueryError> {
  const q = parseReportQuery(params);
  if ("status" in q) return q;
  const scope = await scopeOf(actor, db);
  if (!(await canSeeSensor(scope, sensorId, db))) return { status: 404, body: { error: `No sensor ${sensorId}.` } };
  if (q.sessionIds?.length) {
    const seen = await visibleSessionIds(scope, q.sessionIds, db);
    const missing = q.sessionIds.find((id) => !seen.has(id));
    if (missing) return { status: 404, body: { error: `No session ${missing}.` } };
  }
  const rule = await ruleFor(db, scope, sensorId, q.projectId);
  if ("status" in rule) return rule;
  // the report's own fingerprint (report-state.server): the series is kept while it holds
  const projectIds = scope.all ? null : scope.projectIds;
  const state = await readState(db, sensorId, q.projectId, projectIds);
  const sensor = state.sensor ? { a: state.sensor.toleranceMm, b: state.sensor.tolerancePpm } : null;
  if (!sensor) return { status: 404, body: { error: `No sensor ${sensorId}.` } };
  const key = JSON.stringify([queryKey(sensorId, q, projectIds), rule, sizes.bins ?? null, sizes.perBin ?? null, sizes.maxNotable ?? null]);
  const hit = kept.get(db, key, state.fingerprint);
  if (hit) return { status: 200, body: hit };
  const body = await seriesOf(db, scope, sensorId, q, rule, sensor, sizes);
  kept.set(db, key, state.fingerprint, body);
  return { status: 200, body };
}

// issue 16 (v16): series kept per query and reader's projects while the report's fingerprint
// holds (any insert, exclusion, restore, recomputation, rule or sensor edit changes it); about
// 40 KB each, the oldest dropped first.
const kept = keptByFingerprint<ReportSeriesJson>(100);

/** Forgets the series this process keeps for the database (tests and the bench; never needed for correctness). */
export function clearSeriesCache(db: Db = getDb()) {
  kept.clear(db);
}

async function seriesOf(
  db: Db,
  scope: Scope,
  sensorId: string,
  q: ReportQuery,
  rule: { k: number; projectId: string | null },
  sensor: { a: number; b: number },
  sizes: SeriesSizes,
): Promise<ReportSeriesJson> {
  const where = and(eq(shots.sensorId, sensorId), ...periodWhere(q.from, q.to), q.sessionIds?.length ? inArray(shots.sessionId, q.sessionIds) : undefined, sessionIdInScope(scope, shots.sessionId))!;
  const [[p], wrapped] = await db.batch([packedColumns(db, where), wrappedRows(db, where)]);
  const n = Number(p?.n ?? 0);
  const ids = list(p?.rn) as number[];
  const wraps = new Set(wrapped.map((r) => Number(r.rn)));
  const d = list(p?.d) as number[];
  const e = list(p?.e) as number[];
  const bits = list(p?.bits) as number[];
  const rp = list(p?.rp);
  const lux = list(p?.lux);
  if (ids.length !== n || d.length !== n || e.length !== n || bits.length !== n || rp.length !== n || lux.length !== n) throw new Error("report series: the columns did not read back");
  const k = rule.k;
  // the report's limit, in the same order of operations as app/domain and the report's SQL
  const limitAt = (x: number) => k * (sensor.a + (sensor.b * x) / 1000);
  const excluded = new Uint8Array(n);
  const retro = new Uint8Array(n);
  const wrap = new Uint8Array(n);
  let nIncluded = 0;
  for (let i = 0; i < n; i++) {
    excluded[i] = bits[i]! & 1;
    retro[i] = (bits[i]! & 4) >> 2;
    if (wraps.size && wraps.has(ids[i]!)) wrap[i] = 1;
    if (!excluded[i]) nIncluded++;
  }
  const included = new Float64Array(nIncluded);
  for (let i = 0, j = 0; i < n; i++) if (!excluded[i]) included[j++] = e[i]!;
  const order = orderStatistics(included.sort());
  const outlier = order ? { medianMm: order.median, cutMm: OUTLIER_K * MAD_TO_SIGMA * order.mad } : null;
  const got = seriesOfColumns(
    { rowNumber: ids, d, e, excluded, retro, wrap, reflectancePct: rp, illuminanceKlux: lux },
    { coverageK: k, limitAt, outlier, bins: sizes.bins ?? SERIES_BINS, perBin: sizes.perBin ?? SERIES_PER_BIN, maxNotable: sizes.maxNotable ?? SERIES_MAX_NOTABLE },
  );
  const series = got.series;
  // the ids of the shots sent, by row number (a few thousand lookups by the primary key)
  const named = new Map<number, string>();
  const wanted = [...new Set([...got.pointIndex, ...got.flagged.map((f) => f.i)].map((i) => ids[i]!))];
  for (let at = 0; at < wanted.length; at += 5000) {
    const rows = await db.all<{ rn: number; id: string }>(
      sql`SELECT rowid AS rn, ${shots.id} AS id FROM ${shots} WHERE rowid IN (SELECT value FROM json_each(${JSON.stringify(wanted.slice(at, at + 5000))}))`,
    );
    for (const g of rows) named.set(Number(g.rn), g.id);
  }
  const idOf = (i: number) => named.get(ids[i]!) ?? rowId(ids[i]!);
  return {
    sensorId,
    ruleProjectId: rule.projectId,
    coverageK: k,
    outlier,
    errorSeries: {
      ...series,
      points: series.points.map((r, at) => ({ id: idOf(got.pointIndex[at]!), key: r.key, d: r.d, e: r.e, lim: r.lim, within: r.within, excluded: r.excluded, flagged: r.flagged })),
      limitLine: series.total ? [...new Set([series.dMin, series.dMax])].map((x) => ({ d: x, lim: limitAt(x) })) : [],
    },
    cells: got.cells,
    explain: {
      included: got.included,
      flagged: got.flagged.map((f) => ({
        id: idOf(f.i),
        errorMm: e[f.i]!,
        limitMm: got.lim[f.i]!,
        within: got.within[f.i] === 1,
        excluded: false as const,
        flags: [...(f.outlier ? (["outlier"] as const) : []), ...(f.wrap ? (["wrap"] as const) : [])],
      })),
    },
  };
}
