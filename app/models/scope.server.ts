// Project scoping (api.md v1.1): an admin sees everything; anyone else sees only the records of
// the projects they are a member of. Records outside a user's projects answer 404 exactly as if
// they did not exist, so callers turn "not in scope" into the same answer as "not found".
// Every model function that reads or writes on someone's behalf asks this module, never the
// membership table directly.
import { and, eq, sql, type SQL } from "drizzle-orm";
import type { SQLiteColumn } from "drizzle-orm/sqlite-core";
import { getDb, type Db } from "~/db/client.server";
import { checkSessions, edms, projectEdms, projectMembers, projectSensors, projectSites, projectTapes, projects, sensors, shots, sites, tapes } from "~/db/schema";
import type { Actor } from "./actor";

/** `all`: no filter (admins). Otherwise the ids of the projects the actor is a member of. */
export type Scope = { all: true } | { all: false; projectIds: string[] };

export async function scopeOf(actor: Pick<Actor, "id" | "role">, db: Db = getDb()): Promise<Scope> {
  if (actor.role === "admin") return { all: true };
  const rows = await db.select({ projectId: projectMembers.projectId }).from(projectMembers).where(eq(projectMembers.userId, actor.id));
  return { all: false, projectIds: rows.map((r) => r.projectId).sort() };
}

/** True when the scope may see a record belonging to `projectId` (null: made before projects scoped records — admins only). */
export function inScope(scope: Scope, projectId: string | null | undefined): boolean {
  if (scope.all) return true;
  return projectId != null && scope.projectIds.includes(projectId);
}

/** True when the scope may see something that belongs to any of these projects. */
export function anyInScope(scope: Scope, projectIds: readonly string[]): boolean {
  if (scope.all) return true;
  return projectIds.some((p) => scope.projectIds.includes(p));
}

// ---------------------------------------------------------------------------------------------
// issue 14: the SQL conditions every model adds to its queries, and the "may this actor see
// that record" checks. A session belongs to one project (check_sessions.project_id); a shot,
// photo or exclusion belongs to its session's project; a sensor or site belongs to the projects
// that list it (project_sensors / project_sites) and to those whose sessions used it.

/** The project ids a scope is limited to; null = no limit (admins). */
export function scopeProjectIds(scope: Scope): string[] | null {
  return scope.all ? null : scope.projectIds;
}

/** `col IN (ids)` with the ids as one JSON parameter (any number of projects, one bound value). */
function inList(col: SQL | SQLiteColumn, ids: readonly string[]): SQL {
  return ids.length ? sql`${col} IN (SELECT value FROM json_each(${JSON.stringify(ids)}))` : sql`0`;
}

/** Rows whose own project column is in scope (a session's project_id, a sign-off's project_id). Null project: admins only. */
export function projectColInScope(scope: Scope, col: SQLiteColumn): SQL | undefined {
  return scope.all ? undefined : inList(col, scope.projectIds);
}

/** Rows whose session (by id column) belongs to a project in scope: shots, photos through shots. */
export function sessionIdInScope(scope: Scope, sessionIdCol: SQLiteColumn | SQL): SQL | undefined {
  if (scope.all) return undefined;
  return sql`${sessionIdCol} IN (SELECT ${checkSessions.id} FROM ${checkSessions} WHERE ${inList(checkSessions.projectId, scope.projectIds)})`;
}

/** Rows whose shot (by id column) is in scope: photos, exclusions. */
export function shotIdInScope(scope: Scope, shotIdCol: SQLiteColumn | SQL): SQL | undefined {
  if (scope.all) return undefined;
  return sql`${shotIdCol} IN (SELECT ${shots.id} FROM ${shots} WHERE ${sessionIdInScope(scope, shots.sessionId)})`;
}

/** Sensors a project in scope lists, or whose sessions belong to a project in scope. */
export function sensorIdInScope(scope: Scope, sensorIdCol: SQLiteColumn | SQL): SQL | undefined {
  if (scope.all) return undefined;
  const ids = scope.projectIds;
  return sql`(${sensorIdCol} IN (SELECT ${projectSensors.sensorId} FROM ${projectSensors} WHERE ${inList(projectSensors.projectId, ids)}) OR ${sensorIdCol} IN (SELECT ${checkSessions.sensorId} FROM ${checkSessions} WHERE ${inList(checkSessions.projectId, ids)}))`;
}

/** Sites a project in scope lists, or whose sessions belong to a project in scope. */
export function siteIdInScope(scope: Scope, siteIdCol: SQLiteColumn | SQL): SQL | undefined {
  if (scope.all) return undefined;
  const ids = scope.projectIds;
  return sql`(${siteIdCol} IN (SELECT ${projectSites.siteId} FROM ${projectSites} WHERE ${inList(projectSites.projectId, ids)}) OR ${siteIdCol} IN (SELECT ${checkSessions.siteId} FROM ${checkSessions} WHERE ${inList(checkSessions.projectId, ids)}))`;
}

/** Sensors listed by a project in scope (not merely used): what the tablet and the import may offer. */
export function sensorListedInScope(scope: Scope, sensorIdCol: SQLiteColumn | SQL): SQL | undefined {
  if (scope.all) return undefined;
  return sql`${sensorIdCol} IN (SELECT ${projectSensors.sensorId} FROM ${projectSensors} WHERE ${inList(projectSensors.projectId, scope.projectIds)})`;
}

/** Sites listed by a project in scope. */
export function siteListedInScope(scope: Scope, siteIdCol: SQLiteColumn | SQL): SQL | undefined {
  if (scope.all) return undefined;
  return sql`${siteIdCol} IN (SELECT ${projectSites.siteId} FROM ${projectSites} WHERE ${inList(projectSites.projectId, scope.projectIds)})`;
}

const exists = async (q: Promise<unknown[]>) => (await q).length > 0;

/** True when the sensor exists and the scope may see it (false answers like "no such sensor"). */
export async function canSeeSensor(scope: Scope, sensorId: string, db: Db = getDb()): Promise<boolean> {
  return exists(
    db
      .select({ id: sensors.id })
      .from(sensors)
      .where(and(eq(sensors.id, sensorId), sensorIdInScope(scope, sensors.id)))
      .limit(1),
  );
}

export async function canSeeSite(scope: Scope, siteId: string, db: Db = getDb()): Promise<boolean> {
  return exists(
    db
      .select({ id: sites.id })
      .from(sites)
      .where(and(eq(sites.id, siteId), siteIdInScope(scope, sites.id)))
      .limit(1),
  );
}

export async function canSeeProject(scope: Scope, projectId: string, db: Db = getDb()): Promise<boolean> {
  return exists(
    db
      .select({ id: projects.id })
      .from(projects)
      .where(and(eq(projects.id, projectId), projectColInScope(scope, projects.id)))
      .limit(1),
  );
}

/** The session ids of the list that exist and are in scope. */
export async function visibleSessionIds(scope: Scope, ids: readonly string[], db: Db = getDb()): Promise<Set<string>> {
  if (!ids.length) return new Set();
  const rows = await db
    .select({ id: checkSessions.id })
    .from(checkSessions)
    .where(and(inList(checkSessions.id, [...new Set(ids)]), projectColInScope(scope, checkSessions.projectId)));
  return new Set(rows.map((r) => r.id));
}

export async function canSeeShot(scope: Scope, shotId: string, db: Db = getDb()): Promise<boolean> {
  return exists(
    db
      .select({ id: shots.id })
      .from(shots)
      .where(and(eq(shots.id, shotId), sessionIdInScope(scope, shots.sessionId)))
      .limit(1),
  );
}

// issue 14 (p14): tapes and reference EDMs belong to the projects that list them
// (project_tapes / project_edms; the links of sessions made before them were filled in once at
// migrate time). Listed, not merely used: a tape taken off a project stops travelling to its
// tablets, and its old shots keep their traceability through the shots themselves.

/** Tapes listed by a project in scope. */
export function tapeListedInScope(scope: Scope, tapeIdCol: SQLiteColumn | SQL): SQL | undefined {
  if (scope.all) return undefined;
  return sql`${tapeIdCol} IN (SELECT ${projectTapes.tapeId} FROM ${projectTapes} WHERE ${inList(projectTapes.projectId, scope.projectIds)})`;
}

/** Reference EDMs listed by a project in scope. */
export function edmListedInScope(scope: Scope, edmIdCol: SQLiteColumn | SQL): SQL | undefined {
  if (scope.all) return undefined;
  return sql`${edmIdCol} IN (SELECT ${projectEdms.edmId} FROM ${projectEdms} WHERE ${inList(projectEdms.projectId, scope.projectIds)})`;
}

/** True when the tape exists and the scope may see it (false answers like "no such tape"). */
export async function canSeeTape(scope: Scope, tapeId: string, db: Db = getDb()): Promise<boolean> {
  return exists(
    db
      .select({ id: tapes.id })
      .from(tapes)
      .where(and(eq(tapes.id, tapeId), tapeListedInScope(scope, tapes.id)))
      .limit(1),
  );
}

export async function canSeeEdm(scope: Scope, edmId: string, db: Db = getDb()): Promise<boolean> {
  return exists(
    db
      .select({ id: edms.id })
      .from(edms)
      .where(and(eq(edms.id, edmId), edmListedInScope(scope, edms.id)))
      .limit(1),
  );
}
