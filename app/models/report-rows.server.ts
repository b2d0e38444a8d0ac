// The per-shot rows of a sensor report, read only when asked for (`?include=shots`, the CSV
// export, the screens that list shots): one query, one text value per column (issue 16).
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
