// The query of GET /api/shots and /api/shots.geojson: its parameters parsed and checked, the
// cursors of its orders, and the period and band conditions the report read path shares.
import { gte, lt, type SQL } from "drizzle-orm";
import { shots } from "~/db/schema";
import type { RecordError } from "~/contract";
export type ShotQuery = {
  sensor?: string;
  sessions: string[];
  band?: string;
  reflectance?: "dark" | "mid" | "bright" | "retro";
  within?: boolean;
  excluded?: boolean;
  /** issue 16: "any" = outlier or wrap (the table's "flagged"). */
  flag?: "outlier" | "wrap" | "excluded" | "any";
  from?: string;
  to?: string;
  project?: string;
  cursor?: { takenAt: string; id: string };
  /** issue 16: the table's order (default takenAt ascending) and a cursor of that order. */
  sort?: { key: ShotSortKey; dir: 1 | -1 };
  sortCursor?: { v: number | string; id: string };
  /** issue 16: also answer the number of shots matching the filters (`total`). */
  count?: boolean;
  /** issue 16 (GeoJSON): at most this many features, the notable ones first, then a fixed sample. */
  max?: number;
  limit: number;
};

/** issue 16: the orders of GET /api/shots (`sort=key` ascending, `sort=-key` descending). */
export const SHOT_SORT_KEYS = ["takenAt", "referenceM", "errorMm", "absError", "limitMm"] as const;
export type ShotSortKey = (typeof SHOT_SORT_KEYS)[number];

export const SHOTS_PAGE_MAX = 1000;
/** issue 16: the most features a bounded GeoJSON answer (`max`) may ask for. */
export const GEOJSON_MAX = 50_000;
const REFLECTANCE_CLASSES = ["dark", "mid", "bright", "retro"] as const;

export function encodeCursor(takenAt: string, id: string) {
  return Buffer.from(JSON.stringify([takenAt, id])).toString("base64url");
}
function decodeCursor(s: string): { takenAt: string; id: string } | null {
  try {
    const v = JSON.parse(Buffer.from(s, "base64url").toString("utf8"));
    if (Array.isArray(v) && v.length === 2 && typeof v[0] === "string" && typeof v[1] === "string") return { takenAt: v[0], id: v[1] };
  } catch {}
  return null;
}

/** issue 16: a cursor of a sorted listing names its order, so it is never read under another one. */
export function encodeSortCursor(sort: string, v: number | string, id: string) {
  return Buffer.from(JSON.stringify([sort, v, id])).toString("base64url");
}
function decodeSortCursor(s: string): { sort: string; v: number | string; id: string } | null {
  try {
    const v = JSON.parse(Buffer.from(s, "base64url").toString("utf8"));
    if (Array.isArray(v) && v.length === 3 && typeof v[0] === "string" && (typeof v[1] === "number" || typeof v[1] === "string") && typeof v[2] === "string") return { sort: v[0], v: v[1], id: v[2] };
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
export function rangeBandBounds(label: string): { lo: number | null; hi: number | null } | null {
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
    if (flag === "outlier" || flag === "wrap" || flag === "excluded" || flag === "any") out.flag = flag;
    else errors.push({ path: "flag", message: "flag must be outlier, wrap, excluded or any (outlier or wrap)" });
    if ((flag === "outlier" || flag === "any") && !sensor) errors.push({ path: "flag", message: `flag=${flag} needs a sensor: outliers are judged among one sensor's shots` });
  }
  for (const key of ["from", "to"] as const) {
    const v = q.get(key);
    if (!v) continue;
    if (periodDay(v)) out[key] = v;
    else errors.push({ path: key, message: `${key} must be a date (YYYY-MM-DD)` });
  }
  const max = q.get("max");
  if (max && !opts.paged) {
    const n = Number(max);
    if (Number.isInteger(n) && n >= 1 && n <= GEOJSON_MAX) out.max = n;
    else errors.push({ path: "max", message: `max must be a whole number from 1 to ${GEOJSON_MAX}` });
  }
  if (opts.paged) {
    const limit = q.get("limit");
    if (limit) {
      const n = Number(limit);
      if (Number.isInteger(n) && n >= 1 && n <= SHOTS_PAGE_MAX) out.limit = n;
      else errors.push({ path: "limit", message: `limit must be a whole number from 1 to ${SHOTS_PAGE_MAX}` });
    }
    const sort = q.get("sort");
    if (sort) {
      const key = sort.replace(/^-/, "");
      if ((SHOT_SORT_KEYS as readonly string[]).includes(key)) out.sort = { key: key as ShotSortKey, dir: sort.startsWith("-") ? -1 : 1 };
      else errors.push({ path: "sort", message: `sort must be one of ${SHOT_SORT_KEYS.join(", ")}, with a leading "-" for descending` });
    }
    const count = q.get("count");
    if (count) {
      if (count === "true" || count === "false") out.count = count === "true";
      else errors.push({ path: "count", message: "count must be true or false" });
    }
    const cursor = q.get("cursor");
    if (cursor) {
      const sorted = out.sort && !(out.sort.key === "takenAt" && out.sort.dir === 1);
      const c = sorted ? null : decodeCursor(cursor);
      const sc = sorted ? decodeSortCursor(cursor) : null;
      if (c) out.cursor = c;
      else if (sc && sc.sort === sort) out.sortCursor = { v: sc.v, id: sc.id };
      else if (sc || decodeCursor(cursor) || decodeSortCursor(cursor)) errors.push({ path: "cursor", message: "cursor belongs to another sort order; start again without a cursor" });
      else errors.push({ path: "cursor", message: "cursor is not one this server gave out" });
    }
  }
  if (errors.length) return { status: 400, body: { error: "Invalid query.", errors } };
  return out;
}

/** The selection conditions (sensor, sessions, period, the reader's projects) that outliers are judged within. */
