// Shots: the shot table (cursor paging, GET /api/shots) and the map (GeoJSON). A shot's computed
// columns come from ~/domain's computeShot on the server (./shot-record.ts), the registry they need
// from ./registry-context.server.ts, their recomputation from ./recompute.server.ts.
import { and, asc, eq, gt, gte, inArray, isNotNull, lt, lte, or, sql, type SQL } from "drizzle-orm";
import { getDb, type Db } from "~/db/client.server";
import { exclusions, photos, projects, shots, targets } from "~/db/schema";
import { BRIGHT_ABOVE_PCT, DARK_BELOW_PCT, mad, MAD_TO_SIGMA, median, OUTLIER_K } from "~/domain";
import type { RecordError } from "~/contract";
import type { Actor } from "./actor";
import { canSeeProject, canSeeSensor, scopeOf, sessionIdInScope, visibleSessionIds, type Scope } from "./scope.server";

// Issue 13: these moved to their own modules; this path keeps answering for the importers not
// yet switched (the sync ingest — its robustness test mocks computeShotRecord here —, the report
// read path, the tape/EDM/field-reference models).
export * from "./registry-context.server";
export * from "./recompute.server";
export { computeShotRecord, ruleFor, shotInsertRow, type ComputedColumns, type ShotOutcome } from "./shot-record";

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

export type ShotQuery = {
  sensor?: string;
  sessions: string[];
  band?: string;
  reflectance?: "dark" | "mid" | "bright" | "retro";
  within?: boolean;
  excluded?: boolean;
  flag?: "outlier" | "wrap" | "excluded";
  from?: string;
  to?: string;
  project?: string;
  cursor?: { takenAt: string; id: string };
  limit: number;
};

export const SHOTS_PAGE_MAX = 1000;
const REFLECTANCE_CLASSES = ["dark", "mid", "bright", "retro"] as const;

export function encodeCursor(takenAt: string, id: string) {
  return Buffer.from(JSON.stringify([takenAt, id])).toString("base64url");
}
function decodeCursor(s: string): { takenAt: string; id: string } | null {
  try {
    const v = JSON.parse(Buffer.from(s, "base64url").toString("utf8"));
    if (Array.isArray(v) && typeof v[0] === "string" && typeof v[1] === "string") return { takenAt: v[0], id: v[1] };
  } catch {}
  return null;
}

/**
 * A period bound as the domain's inPeriod reads it: the calendar date of the shot's own
 * takenAt (local to where it was taken), "YYYY-MM-DD" or the date part of an ISO time.
 */
export function periodDay(s: string): string | null {
  const m = /^(\d{4}-\d{2}-\d{2})(T.*)?$/.exec(s);
  if (!m || Number.isNaN(Date.parse(`${m[1]}T00:00:00Z`))) return null;
  return m[1]!;
}

/** takenAt text starts with its date, so "date part ≤ to" is "takenAt < the next day" (index-friendly). */
export function periodWhere(from: string | undefined, to: string | undefined): SQL[] {
  const w: SQL[] = [];
  if (from) w.push(gte(shots.takenAt, periodDay(from)!));
  if (to) {
    const next = new Date(Date.parse(`${periodDay(to)}T00:00:00Z`) + 86_400_000).toISOString().slice(0, 10);
    w.push(lt(shots.takenAt, next));
  }
  return w;
}

/** "10-30" → [10, 30); "100+" → [100, ∞); "<0" → (−∞, 0). */
function rangeBandBounds(label: string): { lo: number | null; hi: number | null } | null {
  let m = /^(\d+(?:\.\d+)?)-(\d+(?:\.\d+)?)$/.exec(label);
  if (m) return { lo: Number(m[1]), hi: Number(m[2]) };
  m = /^(\d+(?:\.\d+)?)\+$/.exec(label);
  if (m) return { lo: Number(m[1]), hi: null };
  m = /^<(\d+(?:\.\d+)?)$/.exec(label);
  if (m) return { lo: null, hi: Number(m[1]) };
  return null;
}

/** A refused query: the HTTP status and the JSON body to answer with. */
export type QueryError = { status: 400 | 404; body: { error: string; errors?: RecordError[] } };

/** Parses the query of GET /api/shots and /api/shots.geojson. */
export function parseShotQuery(url: URL, opts: { paged: boolean }): ShotQuery | QueryError {
  const q = url.searchParams;
  const errors: RecordError[] = [];
  const out: ShotQuery = { sessions: q.getAll("session").filter(Boolean), limit: 100 };
  const sensor = q.get("sensor");
  if (sensor) out.sensor = sensor;
  const project = q.get("project");
  if (project) out.project = project;
  const band = q.get("band");
  if (band) {
    if ((REFLECTANCE_CLASSES as readonly string[]).includes(band)) out.reflectance = band as ShotQuery["reflectance"];
    else if (rangeBandBounds(band)) out.band = band;
    else errors.push({ path: "band", message: 'band must be a range band such as "10-30" or "100+", or a reflectance class (dark, mid, bright, retro)' });
  }
  const refl = q.get("reflectance");
  if (refl) {
    if ((REFLECTANCE_CLASSES as readonly string[]).includes(refl)) out.reflectance = refl as ShotQuery["reflectance"];
    else errors.push({ path: "reflectance", message: "reflectance must be dark, mid, bright or retro" });
  }
  for (const key of ["within", "excluded"] as const) {
    const v = q.get(key);
    if (v == null || v === "") continue;
    if (v === "true" || v === "false") out[key] = v === "true";
    else errors.push({ path: key, message: `${key} must be true or false` });
  }
  const flag = q.get("flag");
  if (flag) {
    if (flag === "outlier" || flag === "wrap" || flag === "excluded") out.flag = flag;
    else errors.push({ path: "flag", message: "flag must be outlier, wrap or excluded" });
    if (flag === "outlier" && !sensor) errors.push({ path: "flag", message: "flag=outlier needs a sensor: outliers are judged among one sensor's shots" });
  }
  for (const key of ["from", "to"] as const) {
    const v = q.get(key);
    if (!v) continue;
    if (periodDay(v)) out[key] = v;
    else errors.push({ path: key, message: `${key} must be a date (YYYY-MM-DD)` });
  }
  if (opts.paged) {
    const limit = q.get("limit");
    if (limit) {
      const n = Number(limit);
      if (Number.isInteger(n) && n >= 1 && n <= SHOTS_PAGE_MAX) out.limit = n;
      else errors.push({ path: "limit", message: `limit must be a whole number from 1 to ${SHOTS_PAGE_MAX}` });
    }
    const cursor = q.get("cursor");
    if (cursor) {
      const c = decodeCursor(cursor);
      if (c) out.cursor = c;
      else errors.push({ path: "cursor", message: "cursor is not one this server gave out" });
    }
  }
  if (errors.length) return { status: 400, body: { error: "Invalid query.", errors } };
  return out;
}

/** The selection conditions (sensor, sessions, period, the reader's projects) that outliers are judged within. */
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

/** Median and cut of the outlier flag over the included shots of the selection (ranging.md §4). */
async function outlierCut(q: ShotQuery, scope: Scope, db: Db): Promise<{ med: number; cut: number } | null> {
  if (!q.sensor) return null;
  const rows = await db
    .select({ e: shots.errorMm })
    .from(shots)
    .where(and(...selectionWhere(q, scope), eq(shots.excluded, false)));
  if (!rows.length) return null;
  const e = Float64Array.from(rows, (r) => r.e);
  return { med: median(e), cut: OUTLIER_K * MAD_TO_SIGMA * mad(e) };
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
  return { w, k, cut };
}

export async function listShots(actor: Actor, q: ShotQuery, db: Db = getDb()): Promise<{ status: 200; body: { shots: ShotJson[]; nextCursor: string | null } } | QueryError> {
  const extra: SQL[] = [];
  if (q.cursor) extra.push(or(gt(shots.takenAt, q.cursor.takenAt), and(eq(shots.takenAt, q.cursor.takenAt), gt(shots.id, q.cursor.id)))!);
  const f = await filteredRows(q, await scopeOf(actor, db), db, extra);
  if ("error" in f) return f.error;
  if (!f.w) return { status: 200, body: { shots: [], nextCursor: null } };
  const rows = await selectShots(db)
    .where(and(...f.w))
    .orderBy(asc(shots.takenAt), asc(shots.id))
    .limit(q.limit + 1);
  const page = rows.slice(0, q.limit);
  const last = page[page.length - 1];
  return {
    status: 200,
    body: {
      shots: page.map((r) => toJson(r, f.k, f.cut)),
      nextCursor: rows.length > q.limit && last ? encodeCursor(last.takenAt, last.id) : null,
    },
  };
}

export async function shotsGeoJson(actor: Actor, q: ShotQuery, db: Db = getDb()) {
  const f = await filteredRows(q, await scopeOf(actor, db), db, [isNotNull(shots.lat), isNotNull(shots.lon)]);
  if ("error" in f) return f.error;
  const rows = f.w
    ? await selectShots(db)
        .where(and(...f.w))
        .orderBy(asc(shots.takenAt), asc(shots.id))
    : [];
  return {
    status: 200 as const,
    body: {
      type: "FeatureCollection" as const,
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
