// Shots: the shot table (cursor paging, GET /api/shots) and the map (GeoJSON). A shot's computed
// columns come from ~/domain's computeShot on the server (./shot-record.ts), the registry they need
// from ./registry-context.server.ts, their recomputation from ./recompute.server.ts.
import { and, asc, eq, gt, gte, inArray, isNotNull, lt, lte, or, sql, type SQL } from "drizzle-orm";
import { getDb, type Db } from "~/db/client.server";
import { exclusions, photos, projects, shots, targets } from "~/db/schema";
import { BRIGHT_ABOVE_PCT, DARK_BELOW_PCT, MAD_TO_SIGMA, orderStatistics, OUTLIER_K } from "~/domain";
import type { Actor } from "./actor";
import { encodeCursor, encodeSortCursor, periodWhere, rangeBandBounds, type QueryError, type ShotQuery, type ShotSortKey } from "./shot-query.server";
import { canSeeProject, canSeeSensor, scopeOf, sessionIdInScope, visibleSessionIds, type Scope } from "./scope.server";

// ---------------------------------------------------------------------------------------------
// The shot table (cursor paging) and the map (GeoJSON).

const shotColumns = {
  id: shots.id,
  sessionId: shots.sessionId,
  sensorId: shots.sensorId,
  takenAt: shots.takenAt,
  targetId: shots.targetId,
  referenceMethod: shots.referenceMethod,
  referenceM: shots.referenceM,
  rangeM: shots.rangeM,
  errorMm: shots.errorMm,
  toleranceMm: shots.toleranceMm,
  limitMm: shots.limitMm,
  within: shots.within,
  repeatabilityMm: shots.repeatabilityMm,
  readingsCount: shots.readingsCount,
  reflectancePct: shots.reflectancePct,
  retro: shots.retro,
  illuminanceKlux: shots.illuminanceKlux,
  incidenceDeg: shots.incidenceDeg,
  lat: shots.lat,
  lon: shots.lon,
  accuracyM: shots.accuracyM,
  note: shots.note,
  wrap: shots.wrap,
  unambiguousM: shots.unambiguousM,
  airDefaulted: shots.airDefaulted,
  excluded: shots.excluded,
  deviceId: shots.deviceId,
  syncedBy: shots.syncedBy,
  receivedAt: shots.receivedAt,
  computedAt: shots.computedAt,
  // correlated subqueries name the outer table in full: drizzle would write a bare "id" there
  targetLabel: sql<string | null>`(SELECT t.label FROM ${targets} t WHERE t.id = "shots"."target_id")`,
  photoIdList: sql<string | null>`(SELECT group_concat(p.id) FROM ${photos} p WHERE p.shot_id = "shots"."id")`,
  exclusionReason: sql<string | null>`(SELECT x.reason FROM ${exclusions} x WHERE x.shot_id = "shots"."id" AND x.restored_at IS NULL ORDER BY x.created_at DESC LIMIT 1)`,
  // issue 18: the SHA-256 of the scan or frames a shot was made from (null for a tablet shot)
  scanSha256: sql<string | null>`json_extract(${shots.raw}, '$.scan.fileSha256')`,
};
const selectShots = (db: Db) => db.select(shotColumns).from(shots);
type ShotRow = Awaited<ReturnType<typeof selectShots>>[number];

export type ShotFlagName = "outlier" | "wrap";
export type ShotJson = Omit<ShotRow, "lat" | "lon" | "accuracyM" | "photoIdList"> & {
  position: { lat: number; lon: number; accuracyM: number | null } | null;
  photoIds: string[];
  flags: ShotFlagName[];
};

function selectionWhere(q: ShotQuery, scope: Scope): SQL[] {
  const w: SQL[] = [];
  // issue 14: only shots of sessions of the reader's projects (admins: all)
  const inScope = sessionIdInScope(scope, shots.sessionId);
  if (inScope) w.push(inScope);
  if (q.sensor) w.push(eq(shots.sensorId, q.sensor));
  if (q.sessions.length) w.push(inArray(shots.sessionId, q.sessions));
  w.push(...periodWhere(q.from, q.to));
  return w;
}

function cutOf(sorted: Float64Array): { med: number; cut: number } | null {
  const o = orderStatistics(sorted);
  return o ? { med: o.median, cut: OUTLIER_K * MAD_TO_SIGMA * o.mad } : null;
}

/** Median and cut of the outlier flag over the included shots of the selection (ranging.md §4). */
async function outlierCut(q: ShotQuery, scope: Scope, db: Db): Promise<{ med: number; cut: number } | null> {
  if (!q.sensor) return null;
  // issue 16: the errors as ONE text value in index order (a JS object per row costs ~1 s of CPU at
  // 100,000 shots, on every page of the table); %!.17g reads back bit for bit
  const [row] = await db.all<{ v: string | null }>(sql`
    SELECT group_concat(v) AS v FROM (
      SELECT printf('%!.17g', ${shots.errorMm}) AS v FROM ${shots} WHERE ${and(...selectionWhere(q, scope), eq(shots.excluded, false))} ORDER BY ${shots.errorMm}
    )`);
  if (!row || row.v == null) return null;
  const e = Float64Array.from(JSON.parse(`[${row.v}]`) as number[]);
  // SQLite keeps the subquery's order through group_concat in practice, though it does not promise it
  for (let i = 1; i < e.length; i++) if (e[i - 1]! > e[i]!) return cutOf(e.sort());
  return cutOf(e);
}

async function kFor(projectId: string | undefined, scope: Scope, db: Db): Promise<number | null | undefined> {
  if (!projectId) return undefined;
  // a project outside the reader's ones answers as an unknown one
  if (!(await canSeeProject(scope, projectId, db))) return null;
  const [p] = await db.select({ k: projects.coverageK }).from(projects).where(eq(projects.id, projectId));
  return p ? p.k : null;
}

function toJson(r: ShotRow, k: number | undefined, out: { med: number; cut: number } | null): ShotJson {
  const { lat, lon, accuracyM, photoIdList, ...rest } = r;
  const flags: ShotFlagName[] = [];
  if (out && Math.abs(r.errorMm - out.med) > out.cut) flags.push("outlier");
  if (r.wrap) flags.push("wrap");
  const limitMm = k === undefined ? r.limitMm : k * r.toleranceMm;
  return {
    ...rest,
    limitMm,
    within: k === undefined ? r.within : Math.abs(r.errorMm) <= limitMm,
    position: lat != null && lon != null ? { lat, lon, accuracyM } : null,
    photoIds: photoIdList ? photoIdList.split(",") : [],
    flags,
  };
}

type Filter = { w: SQL[] | null; k: number | undefined; cut: { med: number; cut: number } | null } | { error: QueryError };

/**
 * issue 14: a list filtered by a sensor or session the reader may not see (or that does not
 * exist) answers 404, the same either way.
 */
async function unseenFilter(q: ShotQuery, scope: Scope, db: Db): Promise<QueryError | null> {
  if (q.sensor && !(await canSeeSensor(scope, q.sensor, db))) return { status: 404, body: { error: `No sensor ${q.sensor}.` } };
  if (q.sessions.length) {
    const seen = await visibleSessionIds(scope, q.sessions, db);
    const missing = q.sessions.find((id) => !seen.has(id));
    if (missing) return { status: 404, body: { error: `No session ${missing}.` } };
  }
  return null;
}

/** The WHERE of a shot query; w null when nothing can match. */
async function filteredRows(q: ShotQuery, scope: Scope, db: Db, extra: SQL[]): Promise<Filter> {
  const unseen = await unseenFilter(q, scope, db);
  if (unseen) return { error: unseen };
  const cut = await outlierCut(q, scope, db);
  const w = [...selectionWhere(q, scope), ...extra];
  if (q.band) {
    const b = rangeBandBounds(q.band)!;
    if (b.lo != null) w.push(gte(shots.referenceM, b.lo));
    if (b.hi != null) w.push(lt(shots.referenceM, b.hi));
  }
  if (q.reflectance === "retro") w.push(eq(shots.retro, true));
  else if (q.reflectance) {
    w.push(eq(shots.retro, false));
    // the domain's classes (reflectanceClass), as SQL
    if (q.reflectance === "dark") w.push(lt(shots.reflectancePct, DARK_BELOW_PCT));
    if (q.reflectance === "mid") w.push(and(gte(shots.reflectancePct, DARK_BELOW_PCT), lte(shots.reflectancePct, BRIGHT_ABOVE_PCT))!);
    if (q.reflectance === "bright") w.push(gt(shots.reflectancePct, BRIGHT_ABOVE_PCT));
  }
  const k = await kFor(q.project, scope, db);
  if (k === null) return { error: { status: 404, body: { error: `No project ${q.project}.` } } };
  if (q.within !== undefined) {
    // with another project's rule the limit is k·T(D), T(D) stored per shot
    const cond = k === undefined ? eq(shots.within, true) : sql`abs(${shots.errorMm}) <= ${k} * ${shots.toleranceMm}`;
    w.push(q.within ? cond : sql`not (${cond})`);
  }
  if (q.excluded !== undefined) w.push(eq(shots.excluded, q.excluded));
  if (q.flag === "wrap") w.push(eq(shots.wrap, true));
  if (q.flag === "excluded") w.push(eq(shots.excluded, true));
  if (q.flag === "outlier") {
    if (!cut) return { w: null, k, cut };
    w.push(sql`abs(${shots.errorMm} - ${cut.med}) > ${cut.cut}`);
  }
  if (q.flag === "any") w.push(cut ? sql`(${shots.wrap} OR abs(${shots.errorMm} - ${cut.med}) > ${cut.cut})` : eq(shots.wrap, true));
  return { w, k, cut };
}

/** issue 16: a sort key as SQL, and the same value of an answered row (the next page's cursor). */
function sortExpr(key: Exclude<ShotSortKey, "takenAt">, k: number | undefined): SQL {
  if (key === "absError") return sql`abs(${shots.errorMm})`;
  if (key === "limitMm") return k === undefined ? sql`${shots.limitMm}` : sql`(${k} * ${shots.toleranceMm})`;
  return key === "errorMm" ? sql`${shots.errorMm}` : sql`${shots.referenceM}`;
}
function sortValue(key: Exclude<ShotSortKey, "takenAt">, s: ShotJson): number {
  return key === "absError" ? Math.abs(s.errorMm) : key === "limitMm" ? s.limitMm : key === "errorMm" ? s.errorMm : s.referenceM;
}

export type ShotPage = { shots: ShotJson[]; nextCursor: string | null; total?: number };

export async function listShots(actor: Actor, q: ShotQuery, db: Db = getDb()): Promise<{ status: 200; body: ShotPage } | QueryError> {
  const sort = q.sort ?? { key: "takenAt" as const, dir: 1 as const };
  const timeDesc = sort.key === "takenAt" && sort.dir === -1;
  const byTime = sort.key === "takenAt" && sort.dir === 1;
  const f = await filteredRows(q, await scopeOf(actor, db), db, []);
  if ("error" in f) return f.error;
  if (!f.w) return { status: 200, body: { shots: [], nextCursor: null, ...(q.count ? { total: 0 } : {}) } };
  const page: SQL[] = [];
  let order: SQL[];
  let cursorOf: (s: ShotJson) => string;
  if (byTime || timeDesc) {
    // the documented cursor [takenAt, id] ascending; descending, a sort cursor holding takenAt; ties by id ascending
    const c = byTime ? q.cursor : q.sortCursor && typeof q.sortCursor.v === "string" ? { takenAt: q.sortCursor.v, id: q.sortCursor.id } : undefined;
    if (timeDesc && q.sortCursor && typeof q.sortCursor.v !== "string")
      return { status: 400, body: { error: "Invalid query.", errors: [{ path: "cursor", message: "cursor is not one this server gave out" }] } };
    if (c)
      page.push(
        byTime ? or(gt(shots.takenAt, c.takenAt), and(eq(shots.takenAt, c.takenAt), gt(shots.id, c.id)))! : or(lt(shots.takenAt, c.takenAt), and(eq(shots.takenAt, c.takenAt), gt(shots.id, c.id)))!,
      );
    order = [byTime ? asc(shots.takenAt) : sql`${shots.takenAt} DESC`, asc(shots.id)];
    cursorOf = (s) => (byTime ? encodeCursor(s.takenAt, s.id) : encodeSortCursor("-takenAt", s.takenAt, s.id));
  } else {
    const key = sort.key as Exclude<ShotSortKey, "takenAt">;
    const expr = sortExpr(key, f.k);
    const c = q.sortCursor;
    if (c && typeof c.v !== "number") return { status: 400, body: { error: "Invalid query.", errors: [{ path: "cursor", message: "cursor is not one this server gave out" }] } };
    if (c) page.push(sort.dir === 1 ? sql`(${expr} > ${c.v} OR (${expr} = ${c.v} AND ${shots.id} > ${c.id}))` : sql`(${expr} < ${c.v} OR (${expr} = ${c.v} AND ${shots.id} > ${c.id}))`);
    order = [sort.dir === 1 ? sql`${expr} ASC` : sql`${expr} DESC`, asc(shots.id)];
    const name = `${sort.dir === 1 ? "" : "-"}${key}`;
    cursorOf = (s) => encodeSortCursor(name, sortValue(key, s), s.id);
  }
  const [rows, counted] = await Promise.all([
    selectShots(db)
      .where(and(...f.w, ...page))
      .orderBy(...order)
      .limit(q.limit + 1),
    q.count
      ? db
          .select({ n: sql<number>`count(*)` })
          .from(shots)
          .where(and(...f.w))
      : null,
  ]);
  const list = rows.slice(0, q.limit).map((r) => toJson(r, f.k, f.cut));
  const last = list[list.length - 1];
  return {
    status: 200,
    body: {
      shots: list,
      nextCursor: rows.length > q.limit && last ? cursorOf(last) : null,
      ...(counted ? { total: Number(counted[0]?.n ?? 0) } : {}),
    },
  };
}

/**
 * issue 16: with `max`, beyond that many located shots the answer holds every notable one
 * (excluded, outside its limit, flagged; the largest |error| first) and fills up with the others
 * in the fixed order of the random tail of their ids (app/domain/series.ts's sample order), so a
 * map of 100,000 shots draws a few thousand, the same on every view; `total` and `sampled` say so.
 */
async function boundedRows(db: Db, where: SQL[], k: number | undefined, cut: { med: number; cut: number } | null, max: number) {
  const [{ n }] = await db
    .select({ n: sql<number>`count(*)` })
    .from(shots)
    .where(and(...where));
  const total = Number(n);
  if (total <= max)
    return {
      rows: await selectShots(db)
        .where(and(...where))
        .orderBy(asc(shots.takenAt), asc(shots.id)),
      total,
      sampled: false,
    };
  const outside = k === undefined ? sql`NOT ${shots.within}` : sql`abs(${shots.errorMm}) > ${k} * ${shots.toleranceMm}`;
  const notable = sql`(${shots.excluded} OR ${outside} OR ${shots.wrap}${cut ? sql` OR abs(${shots.errorMm} - ${cut.med}) > ${cut.cut}` : sql``})`;
  const first = await selectShots(db)
    .where(and(...where, notable))
    .orderBy(sql`abs(${shots.errorMm}) DESC`, asc(shots.id))
    .limit(max);
  const rest =
    first.length < max
      ? await selectShots(db)
          .where(and(...where, sql`NOT ${notable}`))
          .orderBy(sql`substr(${shots.id}, 25)`, asc(shots.id))
          .limit(max - first.length)
      : [];
  return { rows: [...first, ...rest], total, sampled: true };
}

export async function shotsGeoJson(actor: Actor, q: ShotQuery, db: Db = getDb()) {
  const f = await filteredRows(q, await scopeOf(actor, db), db, [isNotNull(shots.lat), isNotNull(shots.lon)]);
  if ("error" in f) return f.error;
  const bounded = f.w && q.max ? await boundedRows(db, f.w, f.k, f.cut, q.max) : null;
  const rows = bounded
    ? bounded.rows
    : f.w
      ? await selectShots(db)
          .where(and(...f.w))
          .orderBy(asc(shots.takenAt), asc(shots.id))
      : [];
  return {
    status: 200 as const,
    body: {
      type: "FeatureCollection" as const,
      // RFC 7946 §6.1 foreign members, only when `max` was asked for
      ...(q.max ? { total: bounded?.total ?? 0, sampled: bounded?.sampled ?? false } : {}),
      features: rows.map((r) => {
        const s = toJson(r, f.k, f.cut);
        return {
          type: "Feature" as const,
          id: s.id,
          geometry: { type: "Point" as const, coordinates: [r.lon!, r.lat!] },
          properties: {
            id: s.id,
            sessionId: s.sessionId,
            sensorId: s.sensorId,
            takenAt: s.takenAt,
            referenceM: s.referenceM,
            errorMm: s.errorMm,
            limitMm: s.limitMm,
            within: s.within,
            excluded: s.excluded,
            reflectancePct: s.reflectancePct,
            illuminanceKlux: s.illuminanceKlux,
            accuracyM: s.position?.accuracyM ?? null,
            flags: s.flags,
            // issue 16: what the map's shot panel shows, so the page needs no other per-shot read
            rangeM: s.rangeM,
            retro: s.retro,
            targetLabel: s.targetLabel,
            photoIds: s.photoIds,
          },
        };
      }),
    },
  };
}

/** One shot as the table shows it; null when unknown or (with a scope) outside the reader's projects. */
export async function getShotJson(shotId: string, db: Db = getDb(), scope: Scope = { all: true }): Promise<ShotJson | null> {
  const [r] = await selectShots(db).where(and(eq(shots.id, shotId), sessionIdInScope(scope, shots.sessionId)));
  return r ? toJson(r, undefined, null) : null;
}
