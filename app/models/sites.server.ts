// Sites (test ranges and baselines) with their stations and targets. Shots refer to targets,
// so nothing here is ever deleted: a target or station left out of an edit is retired.
import { and, asc, eq, inArray, isNull, sql } from "drizzle-orm";
import type { GeoPoint, GridPoint } from "~/domain";
import { getDb } from "~/db/client.server";
import { checkSessions, sites, stations, targets } from "~/db/schema";
import { audit } from "~/models/audit.server";
import { invalid, siteSchema, stableStringify, type FieldError, type NotFound, type RegistryResult, type SiteBody } from "~/contract/registry";
import {
  actorId,
  changedFields,
  createRegistryRecord,
  nowIso,
  parseRegistryBody,
  restoreRecord,
  retireRecord,
  type CreateRule,
  type RegistryActor,
  type Retirable,
} from "~/models/registry-upsert.server";
import type { Actor } from "~/models/actor";
import { scopeOf, siteIdInScope } from "~/models/scope.server";
import { recomputeShotsForSite } from "~/models/recompute.server";

export type SiteRow = typeof sites.$inferSelect;
export type TargetRow = typeof targets.$inferSelect;
export type StationRow = typeof stations.$inferSelect;
export type SiteWithChildren = SiteRow & { targets: TargetRow[]; stations: StationRow[] };

type TargetBody = SiteBody["targets"][number];
type StationBody = SiteBody["stations"][number];

// ---------- mapping between body shapes and columns ----------
function gridOf(r: { gridE: number | null; gridN: number | null; gridH: number | null }): GridPoint | null {
  return r.gridE != null && r.gridN != null && r.gridH != null ? { e: r.gridE, n: r.gridN, h: r.gridH } : null;
}
function geoOf(r: { lat: number | null; lon: number | null; h: number | null }): GeoPoint | null {
  return r.lat != null && r.lon != null && r.h != null ? { lat: r.lat, lon: r.lon, h: r.h } : null;
}
function positionColumns(p: { grid?: GridPoint | null; geo?: GeoPoint | null }) {
  return {
    gridE: p.grid?.e ?? null,
    gridN: p.grid?.n ?? null,
    gridH: p.grid?.h ?? null,
    lat: p.geo?.lat ?? null,
    lon: p.geo?.lon ?? null,
    h: p.geo?.h ?? null,
  };
}
function targetColumns(t: TargetBody) {
  return { label: t.label, reflectancePct: t.reflectancePct, retro: t.retro, referenceM: t.referenceM ?? null, ...positionColumns(t), sigmaMm: t.sigmaMm ?? null };
}
function stationColumns(s: StationBody) {
  return { label: s.label, ...positionColumns(s), sigmaMm: s.sigmaMm ?? null };
}

function targetContent(r: TargetRow | TargetBody, withId: boolean) {
  const isRow = "gridE" in r;
  return {
    ...(withId ? { id: r.id } : {}),
    label: r.label,
    reflectancePct: r.reflectancePct,
    retro: r.retro ?? false,
    referenceM: r.referenceM ?? null,
    grid: isRow ? gridOf(r) : (r.grid ?? null),
    geo: isRow ? geoOf(r) : (r.geo ?? null),
    sigmaMm: r.sigmaMm ?? null,
  };
}
function stationContent(r: StationRow | StationBody, withId: boolean) {
  const isRow = "gridE" in r;
  return {
    ...(withId ? { id: r.id } : {}),
    label: r.label,
    grid: isRow ? gridOf(r) : (r.grid ?? null),
    geo: isRow ? geoOf(r) : (r.geo ?? null),
    sigmaMm: r.sigmaMm ?? null,
  };
}

/** The same content: the site's fields and its in-use targets and stations, in order. */
function sameContent(site: SiteWithChildren, b: SiteBody) {
  const withNotes = b.notes !== undefined;
  const head = (x: { name: string; lat?: number | null; lon?: number | null; notes?: string }) => ({
    name: x.name,
    lat: x.lat ?? null,
    lon: x.lon ?? null,
    ...(withNotes ? { notes: x.notes ?? "" } : {}),
  });
  if (stableStringify(head(site)) !== stableStringify(head(b))) return false;
  const ts = site.targets.filter((t) => !t.retiredAt);
  const ss = site.stations.filter((s) => !s.retiredAt);
  if (ts.length !== b.targets.length || ss.length !== b.stations.length) return false;
  const tOk = b.targets.every((t, i) => stableStringify(targetContent(ts[i]!, !!t.id)) === stableStringify(targetContent(t, !!t.id)));
  const sOk = b.stations.every((s, i) => stableStringify(stationContent(ss[i]!, !!s.id)) === stableStringify(stationContent(s, !!s.id)));
  return tOk && sOk;
}

function answerOf(site: SiteWithChildren) {
  return {
    id: site.id,
    targets: site.targets.filter((t) => !t.retiredAt).map((t) => ({ id: t.id, label: t.label })),
    stations: site.stations.filter((s) => !s.retiredAt).map((s) => ({ id: s.id, label: s.label })),
  };
}

const parseSite = (body: unknown) => parseRegistryBody(siteSchema, body);

const SITE_CREATE: CreateRule<SiteBody, SiteWithChildren> = {
  noun: "site",
  parse: parseSite,
  byId: getSite,
  async twins(b) {
    const twins = await getDb().select({ id: sites.id }).from(sites).where(eq(sites.name, b.name));
    const full: SiteWithChildren[] = [];
    for (const t of twins) {
      const site = await getSite(t.id);
      if (site) full.push(site);
    }
    return full;
  },
  same: sameContent,
  answer: answerOf,
  async insert(actor, id, b) {
    const clash = await childIdClash(b, null);
    if (clash) return { status: 409, body: { error: clash } };
    const targetRows = b.targets.map((t) => ({ id: t.id ?? crypto.randomUUID(), siteId: id, ...targetColumns(t) }));
    const stationRows = b.stations.map((s) => ({ id: s.id ?? crypto.randomUUID(), siteId: id, ...stationColumns(s) }));
    const siteRow = { id, name: b.name, lat: b.lat ?? null, lon: b.lon ?? null, notes: b.notes ?? "" };
    await getDb().transaction(async (tx) => {
      await tx.insert(sites).values(siteRow);
      // Inserted in body order: rowid order is the order the admin gave.
      for (const s of stationRows) await tx.insert(stations).values(s);
      for (const t of targetRows) await tx.insert(targets).values(t);
      await audit(actorId(actor), "create", "site", id, { ...siteRow, stations: stationRows, targets: targetRows }, tx);
    });
    return {
      status: 201,
      body: { id, targets: targetRows.map((t) => ({ id: t.id, label: t.label })), stations: stationRows.map((s) => ({ id: s.id, label: s.label })) },
    };
  },
};

// ---------- create ----------
export async function createSite(actor: RegistryActor, body: unknown): Promise<RegistryResult> {
  return createRegistryRecord(SITE_CREATE, actor, body);
}

/** A client-chosen target or station id already used by another site (ids are global). */
async function childIdClash(b: SiteBody, siteId: string | null): Promise<string | null> {
  const tIds = b.targets.map((t) => t.id).filter((x): x is string => !!x);
  const sIds = b.stations.map((s) => s.id).filter((x): x is string => !!x);
  if (new Set(tIds).size !== tIds.length) return "Two targets in the body share an id.";
  if (new Set(sIds).size !== sIds.length) return "Two stations in the body share an id.";
  const db = getDb();
  if (tIds.length) {
    const rows = await db.select({ id: targets.id, siteId: targets.siteId }).from(targets).where(inArray(targets.id, tIds));
    const other = rows.find((r) => r.siteId !== siteId);
    if (other) return `A target with id "${other.id}" already belongs to another site.`;
  }
  if (sIds.length) {
    const rows = await db.select({ id: stations.id, siteId: stations.siteId }).from(stations).where(inArray(stations.id, sIds));
    const other = rows.find((r) => r.siteId !== siteId);
    if (other) return `A station with id "${other.id}" already belongs to another site.`;
  }
  return null;
}

// ---------- update (the admin form) ----------
/**
 * The whole site again. Rows with an id of this site are updated (and brought back if retired),
 * rows without one are added, in-use rows left out are retired — never deleted.
 * A change of surveyed positions or reference distances recomputes the shots taken here.
 */
export async function updateSite(actor: RegistryActor, id: string, body: unknown): Promise<RegistryResult | NotFound> {
  const p = parseSite(body);
  if (!p.ok) return p.result;
  const b = p.value;
  const before = await getSite(id);
  if (!before) return { status: 404, body: { error: `No site with id "${id}".` } };

  const foreign: FieldError[] = [];
  const otherTargets = await idsOfOtherSites(
    targets,
    b.targets.map((t) => t.id),
    id,
  );
  const otherStations = await idsOfOtherSites(
    stations,
    b.stations.map((s) => s.id),
    id,
  );
  b.targets.forEach((t, i) => t.id && otherTargets.has(t.id) && foreign.push({ path: `targets.${i}.id`, message: "This target belongs to another site" }));
  b.stations.forEach((s, i) => s.id && otherStations.has(s.id) && foreign.push({ path: `stations.${i}.id`, message: "This station belongs to another site" }));
  if (foreign.length) return invalid(foreign);

  const at = nowIso();
  const head = { name: b.name, lat: b.lat ?? null, lon: b.lon ?? null, notes: b.notes ?? "" };
  const headChanges = changedFields({ name: before.name, lat: before.lat, lon: before.lon, notes: before.notes }, head);
  const log = { site: headChanges, targets: diffChildren(before.targets, b.targets, targetContent), stations: diffChildren(before.stations, b.stations, stationContent) };
  const nothing = Object.keys(headChanges).length === 0 && [log.targets, log.stations].every((d) => d.added.length + d.changed.length + d.retired.length + d.restored.length === 0);
  if (nothing) return { status: 200, body: { ...answerOf(before), changed: [] } };

  await getDb().transaction(async (tx) => {
    await tx
      .update(sites)
      .set({ ...head, updatedAt: at })
      .where(eq(sites.id, id));
    const keepT = new Set<string>();
    for (const t of b.targets) {
      const tid = t.id ?? crypto.randomUUID();
      keepT.add(tid);
      if (before.targets.some((r) => r.id === tid))
        await tx
          .update(targets)
          .set({ ...targetColumns(t), retiredAt: null })
          .where(eq(targets.id, tid));
      else await tx.insert(targets).values({ id: tid, siteId: id, ...targetColumns(t) });
    }
    for (const r of before.targets) if (!r.retiredAt && !keepT.has(r.id)) await tx.update(targets).set({ retiredAt: at }).where(eq(targets.id, r.id));
    const keepS = new Set<string>();
    for (const s of b.stations) {
      const sid = s.id ?? crypto.randomUUID();
      keepS.add(sid);
      if (before.stations.some((r) => r.id === sid))
        await tx
          .update(stations)
          .set({ ...stationColumns(s), retiredAt: null })
          .where(eq(stations.id, sid));
      else await tx.insert(stations).values({ id: sid, siteId: id, ...stationColumns(s) });
    }
    for (const r of before.stations) if (!r.retiredAt && !keepS.has(r.id)) await tx.update(stations).set({ retiredAt: at }).where(eq(stations.id, r.id));
    await audit(actorId(actor), "update", "site", id, log, tx);
  });

  const geometryChanged = [log.targets, log.stations].some((d) => d.changed.length + d.retired.length + d.restored.length > 0);
  const recomputed = geometryChanged ? await recomputeShotsForSite(id) : 0;
  const after = await getSite(id);
  return { status: 200, body: { ...answerOf(after!), changed: Object.keys(headChanges), recomputed } };
}

async function idsOfOtherSites(table: typeof targets | typeof stations, ids: (string | undefined)[], siteId: string) {
  const given = ids.filter((x): x is string => !!x);
  if (given.length === 0) return new Set<string>();
  const rows = await getDb().select({ id: table.id, siteId: table.siteId }).from(table).where(inArray(table.id, given));
  return new Set(rows.filter((r) => r.siteId !== siteId).map((r) => r.id));
}

function diffChildren<R extends { id: string; label: string; retiredAt: string | null }, B extends { id?: string; label: string }>(
  rows: R[],
  bodies: B[],
  content: (x: R | B, withId: boolean) => object,
) {
  const byId = new Map(rows.map((r) => [r.id, r]));
  const given = new Set(bodies.map((x) => x.id).filter(Boolean));
  const added: string[] = [];
  const changed: string[] = [];
  const restored: string[] = [];
  for (const x of bodies) {
    const r = x.id ? byId.get(x.id) : undefined;
    if (!r) added.push(x.label);
    else {
      if (r.retiredAt) restored.push(r.label);
      if (stableStringify(content(r, false)) !== stableStringify(content(x, false))) changed.push(r.label);
    }
  }
  const retired = rows.filter((r) => !r.retiredAt && !given.has(r.id)).map((r) => r.label);
  return { added, changed, retired, restored };
}

// ---------- retire, read ----------
const SITE_RETIRE: Retirable = {
  entity: "site",
  noun: "site",
  retiredAt: async (id) => (await getDb().select({ retiredAt: sites.retiredAt }).from(sites).where(eq(sites.id, id)).limit(1))[0] ?? null,
  setRetired: (tx, id, retiredAt, at) => tx.update(sites).set({ retiredAt, updatedAt: at }).where(eq(sites.id, id)),
};

export const retireSite = (actor: RegistryActor, id: string, reason = "") => retireRecord(SITE_RETIRE, actor, id, reason);
export const restoreSite = (actor: RegistryActor, id: string) => restoreRecord(SITE_RETIRE, actor, id);

export type SiteListRow = SiteRow & { targetCount: number; stationCount: number; targetLabels: string };

/** The registry's sites the actor may see (issue 14: those of their projects; admins all). */
export async function listSites(actor: Actor, { includeRetired = false }: { includeRetired?: boolean } = {}): Promise<SiteListRow[]> {
  const scope = await scopeOf(actor);
  const rows = await getDb()
    .select({
      site: sites,
      targetCount: sql<number>`(select count(*) from targets t where t.site_id = "sites"."id" and t.retired_at is null)`,
      stationCount: sql<number>`(select count(*) from stations s where s.site_id = "sites"."id" and s.retired_at is null)`,
      targetLabels: sql<string>`coalesce((select group_concat(label, ', ') from (select label from targets t where t.site_id = "sites"."id" and t.retired_at is null order by t.rowid)), '')`,
    })
    .from(sites)
    .where(and(includeRetired ? undefined : isNull(sites.retiredAt), siteIdInScope(scope, sites.id)))
    .orderBy(asc(sites.name));
  return rows.map((r) => ({ ...r.site, targetCount: Number(r.targetCount), stationCount: Number(r.stationCount), targetLabels: String(r.targetLabels) }));
}

/** A site with all its targets and stations, retired ones included (flagged by retiredAt). */
export async function getSite(id: string): Promise<SiteWithChildren | null> {
  const db = getDb();
  const [row] = await db.select().from(sites).where(eq(sites.id, id)).limit(1);
  if (!row) return null;
  const [ts, ss] = await Promise.all([
    db
      .select()
      .from(targets)
      .where(eq(targets.siteId, id))
      .orderBy(sql`rowid`),
    db
      .select()
      .from(stations)
      .where(eq(stations.siteId, id))
      .orderBy(sql`rowid`),
  ]);
  return { ...row, targets: ts, stations: ss };
}

export type SiteGeometry = {
  id: string;
  name: string;
  lat: number | null;
  lon: number | null;
  retiredAt: string | null;
  stations: { id: string; label: string; grid: GridPoint | null; geo: GeoPoint | null; retiredAt: string | null }[];
  targets: {
    id: string;
    label: string;
    reflectancePct: number;
    retro: boolean;
    referenceM: number | null;
    grid: GridPoint | null;
    geo: GeoPoint | null;
    retiredAt: string | null;
  }[];
};

/** Stations and targets with their surveyed positions, for reference distances by coordinates. */
export async function getSiteGeometry(siteId: string): Promise<SiteGeometry | null> {
  const s = await getSite(siteId);
  if (!s) return null;
  return {
    id: s.id,
    name: s.name,
    lat: s.lat,
    lon: s.lon,
    retiredAt: s.retiredAt,
    stations: s.stations.map((r) => ({ id: r.id, label: r.label, grid: gridOf(r), geo: geoOf(r), retiredAt: r.retiredAt })),
    targets: s.targets.map((r) => ({
      id: r.id,
      label: r.label,
      reflectancePct: r.reflectancePct,
      retro: r.retro,
      referenceM: r.referenceM,
      grid: gridOf(r),
      geo: geoOf(r),
      retiredAt: r.retiredAt,
    })),
  };
}

export async function sitesExist(ids: string[]): Promise<Set<string>> {
  if (ids.length === 0) return new Set();
  const rows = await getDb().select({ id: sites.id }).from(sites).where(inArray(sites.id, ids));
  return new Set(rows.map((r) => r.id));
}

/** Sessions held at a site (shown before retiring it). */
export async function siteUsage(id: string): Promise<{ sessions: number }> {
  const [row] = await getDb()
    .select({ n: sql<number>`count(*)` })
    .from(checkSessions)
    .where(and(eq(checkSessions.siteId, id)));
  return { sessions: Number(row?.n ?? 0) };
}
