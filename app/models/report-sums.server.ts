// The figures of a sensor report from the database (issue 16; docs/decisions/0006-report-read-path.md):
// group sums of the selection and its included errors in ascending order, in one read
// transaction. readSums is the whole read; on the production server it runs on a worker
// thread with its own connection (report-pool.server.ts), so the request thread never waits
// for it.
import { and, eq, gte, inArray, sql, type SQL } from "drizzle-orm";
import { SQLiteAsyncDialect } from "drizzle-orm/sqlite-core";
import type { InArgs, Transaction } from "@libsql/client";
import type { Db } from "~/db/client.server";
import { checkSessions, reportSums, shots } from "~/db/schema";
import { BRIGHT_SUN_KLUX } from "~/domain/coverage";
import { orderStatistics, type OrderStatistics, type ReportGroup, type Rule } from "~/domain";
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
/**
 * The order statistics travel instead of the sorted errors: a few numbers, not 8 bytes a shot
 * copied from the report thread (and the thread drops its array as soon as it has them).
 */
export type Sums = { groupRows: GroupRow[]; order: OrderStatistics; sessions: { id: string; startedAt: string }[]; uses: Use[] };

const orderOf = (sorted: Float64Array): OrderStatistics => ({ n: sorted.length, ...(orderStatistics(sorted) ?? { median: NaN, mad: NaN, p95Abs: NaN }) });

/**
 * Whether the kept sums (report_sums) can answer the selection exactly: its groups are whole
 * metres of D, so the rule's band edges must be whole metres; a period cuts across them; the
 * count of shots outside their limit is read from the error index above k·a, which bounds
 * every limit k·(a + b·D/1000) from below only when a, b ≥ 0 (a negative one never passes the
 * registry's checks; the scan stays for it).
 */
export function keptSumsApply(q: ReportQuery, tolerance: { toleranceMm: number; tolerancePpm: number }, rule: Rule): boolean {
  return !q.from && !q.to && rule.rangeBandEdgesM.every((x) => Number.isSafeInteger(x)) && tolerance.toleranceMm >= 0 && tolerance.tolerancePpm >= 0 && rule.coverageK > 0;
}

/** The selection's sessions as conditions on report_sums (the sessions asked for, the reader's projects). */
function keptWhere(db: Db, sensorId: string, q: ReportQuery, projectIds: ProjectFilter): SQL[] {
  const where = [eq(reportSums.sensorId, sensorId)];
  if (q.sessionIds?.length) where.push(inArray(reportSums.sessionId, q.sessionIds));
  if (projectIds) {
    where.push(projectIds.length ? inArray(reportSums.sessionId, db.select({ id: checkSessions.id }).from(checkSessions).where(inArray(checkSessions.projectId, projectIds))) : sql`0`);
  }
  return where;
}

type KeptRow = Omit<GroupRow, "within" | "maxAbs">;

/**
 * The kept sums regrouped by the rule's range bands and moved from each row's own shift
 * (k_e, k_d) to the selection's (kE, kD, the same included shot as the grouped scan takes):
 * with x = k_e − kE, Σ(e − kE) = s1 + n·x and Σ(e − kE)² = s2 + 2x·s1 + n·x², likewise for D,
 * and Σ(D − kD)(e − kE) = de + x·d1 + y·s1 + n·x·y (y = k_d − kD). Whole-metre groups and
 * whole-metre edges: D < edge exactly when floor(D) < edge.
 */
export function keptGroupsQuery(db: Db, where: SQL[], kept: SQL[], rule: Rule) {
  return db.all<KeptRow>(keptGroupsSql(where, kept, rule));
}
function keptGroupsSql(where: SQL[], kept: SQL[], rule: Rule): SQL {
  const e = shots.errorMm;
  const edges = rule.rangeBandEdgesM;
  const bin = sql.raw("dbin"); // a column of the CTE g below, not of the table
  const rb = sql.join([sql`CASE WHEN ${bin} < ${edges[0]} THEN -1`, ...edges.slice(1).map((edge, i) => sql`WHEN ${bin} < ${edge} THEN ${i}`), sql`ELSE ${edges.length - 1} END`], sql` `);
  return sql`
    WITH k AS (SELECT ${e} AS ke, ${shots.referenceM} AS kd FROM ${shots} WHERE ${and(...where, eq(shots.excluded, false))} ORDER BY ${e} LIMIT 1),
    g AS (SELECT ${reportSums}.*, k_e - ifnull((SELECT ke FROM k), 0) AS x, k_d - ifnull((SELECT kd FROM k), 0) AS y FROM ${reportSums} WHERE ${and(...kept)})
    SELECT session_id AS sessionId, excl AS excluded, rc, lb, ${rb} AS rb,
      sum(n) AS n,
      sum(s1 + n * x) AS s1, sum(s2 + 2 * x * s1 + n * x * x) AS s2, sum(sq) AS sq,
      sum(d1 + n * y) AS d1, sum(d2 + 2 * y * d1 + n * y * y) AS d2, sum(de + x * d1 + y * s1 + n * x * y) AS de,
      sum(sum_d) AS sumD, sum(sum_u2) AS sumU2, sum(unknown_u) AS unknownU,
      sum(sun) > 0 AS sun, sum(air) > 0 AS air,
      (SELECT ke FROM k) AS kE, (SELECT kd FROM k) AS kD
    FROM g GROUP BY 1, 2, 3, 4, 5`;
}
/**
 * The included shots outside their limit, per group: |e| > k·(a + b·D/1000) implies |e| > k·a,
 * so only the error index's two ends beyond ±k·a are read (a handful of rows for a sensor that
 * passes), each decided by the grouped scan's own expression, bit for bit.
 */
export function outsideQuery(db: Db, where: SQL[], sensor: { toleranceMm: number; tolerancePpm: number }, rule: Rule) {
  return db.all<OutsideRow>(outsideSql(where, sensor, rule));
}
type OutsideRow = { sessionId: string; rc: number; lb: number; rb: number; n: number };
function outsideSql(where: SQL[], sensor: { toleranceMm: number; tolerancePpm: number }, rule: Rule): SQL {
  const e = shots.errorMm;
  const { rc, lb, rb } = bandColumns(rule.rangeBandEdgesM);
  const floor = sql`${rule.coverageK} * ${sensor.toleranceMm}`;
  const lim = sql`${rule.coverageK} * (${sensor.toleranceMm} + ${sensor.tolerancePpm} * ${shots.referenceM} / 1000)`;
  const inc = and(...where, eq(shots.excluded, false));
  const part = (range: SQL) => sql`SELECT ${shots.sessionId} AS sessionId, ${rc} AS rc, ${lb} AS lb, ${rb} AS rb FROM ${shots} WHERE ${inc} AND ${range} AND NOT (abs(${e}) <= ${lim})`;
  return sql`
    SELECT sessionId, rc, lb, rb, count(*) AS n FROM (${part(sql`${e} > ${floor}`)} UNION ALL ${part(sql`${e} < -(${floor})`)}) GROUP BY 1, 2, 3, 4`;
}

/** The kept groups with their within counts (n less those outside) and the largest |e| (the sorted ends). */
function keptGroupRows(kept: KeptRow[], outside: OutsideRow[], sorted: Float64Array): GroupRow[] | null {
  const key = (r: { sessionId: string; rc: number; lb: number; rb: number }) => `${r.sessionId}\u0000${Number(r.rc)}|${Number(r.lb)}|${Number(r.rb)}`;
  const out = new Map(outside.map((o) => [key(o), Number(o.n)] as const));
  // the domain takes the largest of the groups' maxima: every included group may carry the selection's
  const maxAbs = sorted.length ? Math.max(Math.abs(sorted[0]!), Math.abs(sorted[sorted.length - 1]!)) : 0;
  let n = 0;
  const rows = kept.map((r): GroupRow => {
    const included = !Number(r.excluded);
    if (included) n += Number(r.n);
    return { ...r, within: included ? Number(r.n) - (out.get(key(r)) ?? 0) : 0, maxAbs: included ? maxAbs : 0 };
  });
  // kept sums that disagree with the index (never seen; a database restored without its
  // triggers could do it) are not used: the caller scans instead
  return n === sorted.length ? rows : null;
}

/** Included errors read per statement: about 1.2 MB of text, where one read of all was 18 MB at a million shots. */
export const ERRORS_CHUNK = 65_536;
const dialect = new SQLiteAsyncDialect();
const stmt = (q: SQL | { getSQL(): SQL }) => {
  const x = dialect.sqlToQuery("getSQL" in q ? q.getSQL() : q);
  return { sql: x.sql, args: x.params as InArgs };
};

/**
 * The included errors in ascending order, ERRORS_CHUNK at a time, into one Float64Array of the
 * n the kept sums counted (issue 16: at a million shots the one text of all of them, its copy,
 * JSON.parse's array and the typed array held ~60 MB at once on the report thread). Each
 * statement resumes at the last value read, skipping the ties of it already taken, so it seeks
 * the error index instead of counting an OFFSET from the start. All in the caller's read
 * transaction: the chunks and the sums are one snapshot.
 */
export async function sortedErrorsChunked(tx: Transaction, where: SQL[], n: number, chunkSize = ERRORS_CHUNK): Promise<Float64Array | null> {
  const out = new Float64Array(n);
  let got = 0;
  let last: number | null = null;
  let ties = 0;
  for (;;) {
    const inc = [...where, eq(shots.excluded, false), ...(last == null ? [] : [gte(shots.errorMm, last)])];
    const q = sql`SELECT group_concat(v) AS v, count(*) AS n FROM (
      SELECT printf('%!.17g', ${shots.errorMm}) AS v FROM ${shots} WHERE ${and(...inc)} ORDER BY ${shots.errorMm} LIMIT ${chunkSize} OFFSET ${ties})`;
    const row = (await tx.execute(stmt(q))).rows[0] as unknown as { v: string | null; n: number } | undefined;
    const chunk = sortedErrorsOf(row);
    if (got + chunk.length > n) return null;
    out.set(chunk, got);
    got += chunk.length;
    if (chunk.length < chunkSize) break;
    const v = chunk[chunk.length - 1]!;
    // the next statement starts at v again: skip every v already taken (this chunk's, and the
    // earlier ones' when a run of ties is longer than a chunk)
    let t = 0;
    while (t < chunk.length && chunk[chunk.length - 1 - t] === v) t++;
    ties = last === v ? ties + t : t;
    last = v;
  }
  return got === n ? out : null;
}

/** The selection's sums, sorted included errors, sessions and certificate uses: one read transaction. */
export async function readSums(db: Db, input: SumsInput): Promise<Sums> {
  const where = selectionWhere(db, input.sensorId, input.q, input.projectIds);
  if (keptSumsApply(input.q, input.tolerance, input.rule)) {
    const tx = await db.$client.transaction("read");
    try {
      const [kept, outside, sessions, uses] = (
        await tx.batch([
          stmt(keptGroupsSql(where, keptWhere(db, input.sensorId, input.q, input.projectIds), input.rule)),
          stmt(outsideSql(where, input.tolerance, input.rule)),
          stmt(sessionsQuery(db, input.sensorId)),
          stmt(usesQuery(db, where)),
        ])
      ).map((r) => r.rows as unknown[]) as [KeptRow[], OutsideRow[], ArrayLike<string>[], ArrayLike<string | null>[]];
      const n = kept.reduce((a, r) => a + (Number(r.excluded) ? 0 : Number(r.n)), 0);
      const sortedErrors = await sortedErrorsChunked(tx, where, n);
      const groupRows = sortedErrors && keptGroupRows(kept, outside, sortedErrors);
      // the builder's statements name their columns as in the table: read by position, in the order selected
      const ses = sessions.map((x) => ({ id: x[0]!, startedAt: x[1]! }));
      const used = uses.map((u): Use => ({ sessionId: u[0]!, tapeId: u[1] ?? null, edmId: u[2] ?? null, day: u[3]! }));
      if (sortedErrors && groupRows) return { groupRows, order: orderOf(sortedErrors), sessions: ses, uses: used };
    } finally {
      tx.close();
    }
    console.warn(`report: the kept sums of sensor ${input.sensorId} do not match its shots; summing the shots instead`);
  }
  return scanSums(db, input, where);
}

/** The same by the grouped scan of the selection (a period, edges not in whole metres). */
async function scanSums(db: Db, input: SumsInput, where: SQL[]): Promise<Sums> {
  const [groupRows, sortedRows, sessions, uses] = await db.batch([
    groupsQuery(db, where, input.tolerance, input.rule),
    sortedErrorsQuery(db, where),
    sessionsQuery(db, input.sensorId),
    usesQuery(db, where),
  ]);
  return { groupRows, order: orderOf(sortedErrorsOf(sortedRows[0])), sessions, uses };
}
