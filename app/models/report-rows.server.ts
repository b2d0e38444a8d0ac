// The per-shot rows of a sensor report, read only when asked for (`?include=shots`, the CSV
// export, the screens that list shots): one query, one text value per column (issue 16).
import type { InArgs, Transaction } from "@libsql/client";
import { and, asc, eq, sql, type SQL } from "drizzle-orm";
import { getDb, type Db } from "~/db/client.server";
import { checkSessions, shots, targets } from "~/db/schema";
import type { ReportShot } from "~/domain";
import { selectionWhere, sessionsQuery, type ProjectFilter, type ReportQuery } from "./report-selection.server";

export type LoadedShot = ReportShot & { note?: string | null; targetLabel?: string | null };

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
function packedQuery(db: Db, where: SQL[], limit?: number) {
  const selection = db
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
    .orderBy(asc(shots.takenAt), asc(shots.id));
  const o = (limit ? selection.limit(limit) : selection).as("o");
  // each column named as its key: a read transaction's raw row (reportShotsPage) reads as Packed
  const gc = <K extends string>(c: unknown, name: K) => sql<string | null>`group_concat(${c})`.as(name);
  return db
    .select({
      ids: gc(o.id, "ids"),
      takenAt: gc(o.takenAt, "takenAt"),
      sessionIds: gc(o.sessionId, "sessionIds"),
      referenceM: gc(o.referenceM, "referenceM"),
      rangeM: gc(o.rangeM, "rangeM"),
      errorMm: gc(o.errorMm, "errorMm"),
      repeatabilityMm: gc(o.repeatabilityMm, "repeatabilityMm"),
      reflectancePct: gc(o.reflectancePct, "reflectancePct"),
      illuminanceKlux: gc(o.illuminanceKlux, "illuminanceKlux"),
      referenceUncertaintyMm: gc(o.referenceUncertaintyMm, "referenceUncertaintyMm"),
      bits: gc(o.bits, "bits"),
    })
    .from(o);
}
type Packed = Awaited<ReturnType<typeof packedQuery>>[number];

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

/** Shots per page of the streamed rows (~230 bytes of JSON each). */
export const ROWS_PAGE = 4000;

/** The sensor's sessions and their start times, through `tx` (the streamed rows' snapshot). */
export async function sessionsIn(tx: Pick<Transaction, "execute">, db: Db, sensorId: string): Promise<{ id: string; startedAt: string }[]> {
  const { sql: text, params } = sessionsQuery(db, sensorId).toSQL();
  const rs = await tx.execute({ sql: text, args: params as InArgs });
  return rs.rows.map((r) => ({ id: String(r[0]), startedAt: String(r[1]) }));
}

/**
 * The selection's shots in (takenAt, id) order, one page at a time after `after`, read through
 * `tx` (a read transaction of the libSQL client: one snapshot for every page). The API's
 * `include=shots` streams these (issue 16): a million rows never sit in memory at once.
 */
export async function reportShotsPage(
  tx: Pick<Transaction, "execute">,
  db: Db,
  where: SQL[],
  sessions: { id: string; startedAt: string }[],
  after: { takenAt: string; id: string } | null,
  limit = ROWS_PAGE,
  details = false,
): Promise<LoadedShot[]> {
  // a row value: SQLite seeks the index (sensor_id, taken_at, id) to it
  const keyset = after ? sql`(${shots.takenAt}, ${shots.id}) > (${after.takenAt}, ${after.id})` : undefined;
  // packed, as loadReportShots reads them (one value per column: no object per row and column)
  if (!details) {
    const packed = packedQuery(db, [...where, ...(keyset ? [keyset] : [])], limit).toSQL();
    const p = (await tx.execute({ sql: packed.sql, args: packed.params as InArgs })).rows[0] as unknown as Packed | undefined;
    const list = unpack(p, sessions);
    if (list) return inTimeOrder(list);
  }
  // with each shot's note and target label (the CSV), or a value needed escaping (not possible for synced records): the plain query
  const { sql: text, params } = plainQuery(db, keyset ? [...where, keyset] : where)
    .limit(limit)
    .toSQL();
  const rs = await tx.execute({ sql: text, args: params as InArgs });
  // the raw columns come back in plainQuery's order (reportColumns, note, target label)
  const num = (v: unknown) => (v == null ? null : Number(v));
  return rs.rows.map((r) => ({
    id: String(r[0]),
    takenAt: String(r[1]),
    sessionId: String(r[2]),
    sessionStartedAt: String(r[3]),
    referenceM: Number(r[4]),
    rangeM: Number(r[5]),
    errorMm: Number(r[6]),
    repeatabilityMm: num(r[7]),
    reflectancePct: Number(r[8]),
    retro: Number(r[9]) !== 0,
    illuminanceKlux: num(r[10]),
    excluded: Number(r[11]) !== 0,
    wrap: Number(r[12]) !== 0,
    airDefaulted: Number(r[13]) !== 0,
    referenceUncertaintyMm: num(r[14]),
    note: r[15] == null ? null : String(r[15]),
    targetLabel: r[16] == null ? null : String(r[16]),
  }));
}
