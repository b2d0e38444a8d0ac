// The figures of a sensor report from the database (issue 16; docs/decisions/0006-report-read-path.md):
// group sums of the selection and its included errors in ascending order, in one read
// transaction. readSums is the whole read; on the production server it runs on a worker
// thread with its own connection (report-pool.server.ts), so the request thread never waits
// for it.
import { and, eq, inArray, sql, type SQL } from "drizzle-orm";
import type { Db } from "~/db/client.server";
import { shots } from "~/db/schema";
import { BRIGHT_SUN_KLUX } from "~/domain/coverage";
import type { ReportGroup, Rule } from "~/domain";
import { selectionWhere, sessionsQuery, type ProjectFilter, type ReportQuery } from "./report-selection.server";

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

export type GroupRow = {
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
export function groupsQuery(db: Db, where: SQL[], sensor: { toleranceMm: number; tolerancePpm: number }, rule: Rule) {
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
export function sortedErrorsQuery(db: Db, where: SQL[]) {
  return db.all<{ v: string | null; n: number }>(sql`
    SELECT group_concat(v) AS v, count(*) AS n FROM (
      SELECT printf('%!.17g', ${shots.errorMm}) AS v FROM ${shots} WHERE ${and(...where, eq(shots.excluded, false))} ORDER BY ${shots.errorMm}
    )`);
}

export function sortedErrorsOf(row: { v: string | null; n: number } | undefined): Float64Array {
  if (!row || row.v == null) return new Float64Array(0);
  const list = JSON.parse(`[${row.v}]`) as number[];
  if (list.length !== Number(row.n)) throw new Error("report: the sorted errors did not read back");
  const out = Float64Array.from(list);
  // SQLite keeps a subquery's order through group_concat in practice, though it does not promise it
  for (let i = 1; i < out.length; i++) if (out[i - 1]! > out[i]!) return out.sort();
  return out;
}

/** (session, day, tape, EDM) uses of the selection's shots: a few rows per session (ranging.md §7 traceability). */
export function usesQuery(db: Db, where: SQL[]) {
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
export type Use = { sessionId: string; tapeId: string | null; edmId: string | null; day: string };

const num = (v: number | null | undefined) => Number(v ?? 0);

export function groupsOf(rows: GroupRow[], startedAt: Map<string, string>): { groups: ReportGroup[]; kE: number; kD: number } {
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

/** What readSums needs: plain data, so it crosses to a worker thread by structured clone. */
export type SumsInput = { sensorId: string; q: ReportQuery; projectIds: ProjectFilter; tolerance: { toleranceMm: number; tolerancePpm: number }; rule: Rule };
export type Sums = { groupRows: GroupRow[]; sortedErrors: Float64Array; sessions: { id: string; startedAt: string }[]; uses: Use[] };

/** The selection's sums, sorted included errors, sessions and certificate uses: one read transaction. */
export async function readSums(db: Db, input: SumsInput): Promise<Sums> {
  const where = selectionWhere(db, input.sensorId, input.q, input.projectIds);
  const [groupRows, sortedRows, sessions, uses] = await db.batch([
    groupsQuery(db, where, input.tolerance, input.rule),
    sortedErrorsQuery(db, where),
    sessionsQuery(db, input.sensorId),
    usesQuery(db, where),
  ]);
  return { groupRows, sortedErrors: sortedErrorsOf(sortedRows[0]), sessions, uses };
}
