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
import { projects, projectSensors, sensors, shots } from "~/db/schema";
import {
  compareNotable,
  sampleKey,
  DEFAULT_RULE,
  errorSeries,
  includedTotals,
  OUTLIER_K,
  MAD_TO_SIGMA,
  orderStatistics,
  seriesCells,
  SERIES_BINS,
  SERIES_MAX_NOTABLE,
  SERIES_PER_BIN,
  type CellRow,
  type ErrorSeries,
  type IncludedTotals,
  type SeriesRow,
  type ShotFlag,
} from "~/domain";
import type { MatrixCell } from "~/contract/report-matrix";
import type { Actor } from "./actor";
import { parseReportQuery, type ReportQuery } from "./reports.server";
import { canSeeProject, canSeeSensor, projectColInScope, scopeOf, sessionIdInScope, visibleSessionIds, type Scope } from "./scope.server";
import { periodWhere, type QueryError } from "./shot-query.server";

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
  const [sensor] = await db.select({ a: sensors.toleranceMm, b: sensors.tolerancePpm }).from(sensors).where(eq(sensors.id, sensorId));
  if (!sensor) return { status: 404, body: { error: `No sensor ${sensorId}.` } };
  return { status: 200, body: await seriesOf(db, scope, sensorId, q, rule, sensor, sizes) };
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
  const d = list(p?.d);
  const e = list(p?.e);
  const bits = list(p?.bits);
  const rp = list(p?.rp);
  const lux = list(p?.lux);
  if (ids.length !== n || d.length !== n || e.length !== n || bits.length !== n || rp.length !== n || lux.length !== n) throw new Error("report series: the columns did not read back");
  const k = rule.k;
  // the report's limit, in the same order of operations as app/domain and the report's SQL
  const limitAt = (x: number) => k * (sensor.a + (sensor.b * x) / 1000);
  const included: number[] = [];
  for (let i = 0; i < n; i++) if (!((bits[i] as number) & 1)) included.push(e[i] as number);
  const order = orderStatistics(Float64Array.from(included).sort());
  const outlier = order ? { medianMm: order.median, cutMm: OUTLIER_K * MAD_TO_SIGMA * order.mad } : null;
  const rows: (SeriesRow & CellRow & { rn: number; wrap: boolean; outlier: boolean })[] = new Array(n);
  for (let i = 0; i < n; i++) {
    const di = d[i] as number;
    const ei = e[i] as number;
    const b = bits[i] as number;
    const lim = limitAt(di);
    const rn = ids[i]!;
    const wrap = wraps.has(rn);
    const isOutlier = outlier != null && Math.abs(ei - outlier.medianMm) > outlier.cutMm;
    // the id is the row number until the drawn ones are named below
    rows[i] = {
      rn,
      id: String(rn).padStart(16, "0"),
      key: sampleKey(rn),
      d: di,
      e: ei,
      lim,
      within: Math.abs(ei) <= lim,
      excluded: (b & 1) !== 0,
      flagged: wrap || isOutlier,
      wrap,
      outlier: isOutlier,
      retro: (b & 4) !== 0,
      reflectancePct: rp[i] ?? null,
      illuminanceKlux: lux[i] ?? null,
    };
  }
  const series = errorSeries(rows, { bins: sizes.bins ?? SERIES_BINS, perBin: sizes.perBin ?? SERIES_PER_BIN, maxNotable: sizes.maxNotable ?? SERIES_MAX_NOTABLE });
  const flagged = rows.filter((r) => !r.excluded && r.flagged).sort(compareNotable);
  // the ids of the shots sent, by row number (a few thousand lookups by the primary key)
  const named = new Map<number, string>();
  const rnOf = (r: SeriesRow) => (r as (typeof rows)[number]).rn;
  const wanted = [...new Set([...series.points, ...flagged].map(rnOf))];
  for (let at = 0; at < wanted.length; at += 5000) {
    const got = await db.all<{ rn: number; id: string }>(
      sql`SELECT rowid AS rn, ${shots.id} AS id FROM ${shots} WHERE rowid IN (SELECT value FROM json_each(${JSON.stringify(wanted.slice(at, at + 5000))}))`,
    );
    for (const g of got) named.set(Number(g.rn), g.id);
  }
  const idOf = (r: SeriesRow) => named.get(rnOf(r)) ?? r.id;
  const slim = (r: SeriesRow): SeriesRow => ({ id: idOf(r), key: r.key, d: r.d, e: r.e, lim: r.lim, within: r.within, excluded: r.excluded, flagged: r.flagged });
  return {
    sensorId,
    ruleProjectId: rule.projectId,
    coverageK: k,
    outlier,
    errorSeries: {
      ...series,
      points: series.points.map(slim),
      limitLine: series.total ? [...new Set([series.dMin, series.dMax])].map((x) => ({ d: x, lim: limitAt(x) })) : [],
    },
    cells: seriesCells(rows),
    explain: {
      included: includedTotals(rows, k),
      flagged: flagged.map((r) => ({
        id: idOf(r),
        errorMm: r.e,
        limitMm: r.lim,
        within: r.within,
        excluded: false as const,
        flags: [...(r.outlier ? (["outlier"] as const) : []), ...(r.wrap ? (["wrap"] as const) : [])],
      })),
    },
  };
}
