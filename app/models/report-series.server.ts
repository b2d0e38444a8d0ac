// issue 16: what the QA report page draws, computed where the shots are. The page asks the
// report without its rows (api.md v1.1) and this for its charts and its "why this verdict":
// - the error-against-distance series of app/domain/series.ts (every notable shot, a
//   deterministic sample of the others per distance bin, and their spread per bin), in SQL;
// - the reflectance × illuminance cells (count, mean error, outside count), grouped in SQL;
// - the included shots' totals and the flagged included shots, all explainVerdict needs.
// The selection, the rule and the limit k·(a + b·D/1000) are the report's own (reports.server),
// so every number here agrees with the report's figures.
import { and, eq, inArray, isNull, sql, type SQL } from "drizzle-orm";
import { getDb, type Db } from "~/db/client.server";
import { projects, projectSensors, sensors, shots } from "~/db/schema";
import {
  BRIGHT_ABOVE_PCT,
  DARK_BELOW_PCT,
  DEFAULT_RULE,
  OUTLIER_K,
  MAD_TO_SIGMA,
  orderStatistics,
  SERIES_BINS,
  SERIES_MAX_NOTABLE,
  SERIES_PER_BIN,
  type ErrorSeries,
  type IncludedTotals,
  type SeriesBin,
  type SeriesRow,
  type ShotFlag,
} from "~/domain";
import type { MatrixCell } from "~/contract/report-matrix";
import { ILLUMINANCE_ORDER, REFLECTANCE_ORDER } from "~/contract/report-matrix";
import type { Actor } from "./actor";
import { parseReportQuery, type ReportQuery } from "./reports.server";
import { canSeeProject, canSeeSensor, projectColInScope, scopeOf, sessionIdInScope, visibleSessionIds, type Scope } from "./scope.server";
import { periodWhere, type QueryError } from "./shots.server";

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

/** The included errors in ascending order as one text value (exact digits), from the index (sensor_id, excluded, error_mm). */
function sortedErrors(db: Db, where: SQL) {
  return db.all<{ v: string | null; n: number }>(sql`
    SELECT group_concat(v) AS v, count(*) AS n FROM (
      SELECT printf('%!.17g', ${shots.errorMm}) AS v FROM ${shots} WHERE ${where} AND ${shots.excluded} = 0 ORDER BY ${shots.errorMm}
    )`);
}

function toSorted(row: { v: string | null; n: number } | undefined): Float64Array {
  if (!row || row.v == null) return new Float64Array(0);
  const out = Float64Array.from(JSON.parse(`[${row.v}]`) as number[]);
  for (let i = 1; i < out.length; i++) if (out[i - 1]! > out[i]!) return out.sort();
  return out;
}

type PointRow = { id: string; d: number; e: number; lim: number; within: number; excluded: number; flagged: number };

const toRow = (r: PointRow): SeriesRow => ({ id: r.id, d: r.d, e: r.e, lim: r.lim, within: !!r.within, excluded: !!r.excluded, flagged: !!r.flagged });

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
  const e = shots.errorMm;
  const d = shots.referenceM;
  const k = rule.k;
  // the report's limit, in the same order of operations as app/domain (within decided bit for bit)
  const lim = sql`(${k} * (${sensor.a} + ${sensor.b} * ${d} / 1000))`;
  const [sortedRows, rangeRows] = await db.batch([
    sortedErrors(db, where),
    db.all<{ lo: number | null; hi: number | null; n: number }>(sql`SELECT min(${d}) AS lo, max(${d}) AS hi, count(*) AS n FROM ${shots} WHERE ${where}`),
  ]);
  const order = orderStatistics(toSorted(sortedRows[0]));
  const outlier = order ? { medianMm: order.median, cutMm: OUTLIER_K * MAD_TO_SIGMA * order.mad } : null;
  const total = Number(rangeRows[0]?.n ?? 0);
  const dMin = Number(rangeRows[0]?.lo ?? 0);
  const dMax = Number(rangeRows[0]?.hi ?? 0);
  const isOutlier = outlier ? sql`(abs(${e} - ${outlier.medianMm}) > ${outlier.cutMm})` : sql`0`;
  const flagged = sql`(${shots.wrap} OR ${isOutlier})`;
  const notable = sql`(${shots.excluded} OR abs(${e}) > ${lim} OR ${flagged})`;
  const bins = sizes.bins ?? SERIES_BINS;
  const perBin = sizes.perBin ?? SERIES_PER_BIN;
  const maxNotable = sizes.maxNotable ?? SERIES_MAX_NOTABLE;
  const bin = dMax > dMin ? sql`min(${bins - 1}, max(0, CAST(((${d} - ${dMin}) / ${dMax - dMin}) * ${bins} AS INTEGER)))` : sql`0`;
  const point = sql`${shots.id} AS id, ${d} AS d, ${e} AS e, ${lim} AS lim, abs(${e}) <= ${lim} AS within, ${shots.excluded} AS excluded, ${flagged} AS flagged`;
  const rc = sql`CASE WHEN ${shots.retro} THEN 3 WHEN ${shots.reflectancePct} < ${DARK_BELOW_PCT} THEN 0 WHEN ${shots.reflectancePct} <= ${BRIGHT_ABOVE_PCT} THEN 1 ELSE 2 END`;
  const lb = sql`CASE WHEN ${shots.illuminanceKlux} < 10 THEN 0 WHEN ${shots.illuminanceKlux} < 50 THEN 1 ELSE 2 END`;
  const included = sql`${where} AND ${shots.excluded} = 0`;
  const [notableRows, notableCount, binRows, sampleRows, cellRows, totalRows, flaggedRows] = await db.batch([
    db.all<PointRow>(sql`SELECT ${point} FROM ${shots} WHERE ${where} AND ${notable} ORDER BY abs(${e}) DESC, ${shots.id} LIMIT ${maxNotable}`),
    db.all<{ n: number }>(sql`SELECT count(*) AS n FROM ${shots} WHERE ${where} AND ${notable}`),
    db.all<{ i: number; n: number; minE: number; maxE: number }>(
      sql`SELECT ${bin} AS i, count(*) AS n, min(${e}) AS minE, max(${e}) AS maxE FROM ${shots} WHERE ${where} AND NOT ${notable} GROUP BY 1 ORDER BY 1`,
    ),
    db.all<PointRow & { i: number }>(sql`
      SELECT * FROM (
        SELECT ${point}, ${bin} AS i, row_number() OVER (PARTITION BY ${bin} ORDER BY substr(${shots.id}, 25), ${shots.id}) AS rn
        FROM ${shots} WHERE ${where} AND NOT ${notable}
      ) WHERE rn <= ${perBin} ORDER BY i, rn`),
    db.all<{ rc: number; lb: number; n: number; bias: number; outside: number }>(sql`
      SELECT ${rc} AS rc, ${lb} AS lb, count(*) AS n, avg(${e}) AS bias, sum(abs(${e}) > ${lim}) AS outside
      FROM ${shots} WHERE ${included} AND ${shots.illuminanceKlux} IS NOT NULL AND ${shots.reflectancePct} IS NOT NULL GROUP BY 1, 2`),
    db.all<{ n: number; s1: number | null; s2: number | null; within: number | null; sumT: number | null }>(sql`
      SELECT count(*) AS n, sum(${e}) AS s1, sum(${e} * ${e}) AS s2, sum(abs(${e}) <= ${lim}) AS within, sum(${sensor.a} + ${sensor.b} * ${d} / 1000) AS sumT
      FROM ${shots} WHERE ${included}`),
    db.all<{ id: string; e: number; lim: number; within: number; wrap: number; outlier: number }>(sql`
      SELECT ${shots.id} AS id, ${e} AS e, ${lim} AS lim, abs(${e}) <= ${lim} AS within, ${shots.wrap} AS wrap, ${isOutlier} AS outlier
      FROM ${shots} WHERE ${included} AND ${flagged} ORDER BY abs(${e}) DESC, ${shots.id}`),
  ]);
  const width = (dMax - dMin) / bins;
  const series: SeriesBin[] = binRows.map((b) => ({ i: Number(b.i), d0: dMin + Number(b.i) * width, d1: dMin + (Number(b.i) + 1) * width, n: Number(b.n), minE: b.minE, maxE: b.maxE }));
  const limitAt = (x: number) => k * (sensor.a + (sensor.b * x) / 1000);
  const t = totalRows[0];
  return {
    sensorId,
    ruleProjectId: rule.projectId,
    coverageK: k,
    outlier,
    errorSeries: {
      total,
      notableTotal: Number(notableCount[0]?.n ?? 0),
      points: [...notableRows.map(toRow), ...sampleRows.map(toRow)],
      bins: series,
      dMin,
      dMax,
      limitLine: total ? [...new Set([dMin, dMax])].map((x) => ({ d: x, lim: limitAt(x) })) : [],
    },
    cells: cellRows.map((c) => ({ reflectance: REFLECTANCE_ORDER[Number(c.rc)]!, illuminance: ILLUMINANCE_ORDER[Number(c.lb)]!, n: Number(c.n), biasMm: c.bias, outside: Number(c.outside) })),
    explain: {
      included: { n: Number(t?.n ?? 0), sumMm: Number(t?.s1 ?? 0), sumSqMm2: Number(t?.s2 ?? 0), within: Number(t?.within ?? 0), sumTMm: Number(t?.sumT ?? 0) },
      flagged: flaggedRows.map((r) => ({
        id: r.id,
        errorMm: r.e,
        limitMm: r.lim,
        within: !!r.within,
        excluded: false as const,
        flags: [...(r.outlier ? (["outlier"] as const) : []), ...(r.wrap ? (["wrap"] as const) : [])],
      })),
    },
  };
}
