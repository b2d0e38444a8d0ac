// The selection of a sensor report (issue 16 split of reports.server.ts): the query string of
// GET …/report and …/report.csv, and the conditions on shots it makes for a reader limited to
// their projects (api.md v1.1).
import { eq, inArray, sql, type SQL } from "drizzle-orm";
import type { Db } from "~/db/client.server";
import { checkSessions, shots } from "~/db/schema";
import { periodDay, periodWhere, type QueryError } from "./shot-query.server";
import type { RecordError } from "~/contract/sync";

/** `includeShots`: the per-shot rows of api.md v1.1 (`?include=shots`). */
export type ReportQuery = { from?: string; to?: string; sessionIds?: string[]; projectId?: string; includeShots?: boolean };

/** Which sessions' shots a reader may see: null = all (admins), else those of these projects. */
export type ProjectFilter = string[] | null;

/** from, to (YYYY-MM-DD), session (repeatable), project, include of GET …/report and …/report.csv. */
export function parseReportQuery(params: URLSearchParams): ReportQuery | QueryError {
  const errors: RecordError[] = [];
  const out: ReportQuery = {};
  for (const key of ["from", "to"] as const) {
    const v = params.get(key);
    if (!v) continue;
    if (periodDay(v)) out[key] = v;
    else errors.push({ path: key, message: `${key} must be a date (YYYY-MM-DD)` });
  }
  if (out.from && out.to && periodDay(out.from)! > periodDay(out.to)!) errors.push({ path: "to", message: "to must not come before from" });
  const sessions = params.getAll("session").filter(Boolean);
  if (sessions.length) out.sessionIds = sessions;
  const project = params.get("project");
  if (project) out.projectId = project;
  for (const inc of params
    .getAll("include")
    .flatMap((v) => v.split(","))
    .filter(Boolean)) {
    if (inc === "shots") out.includeShots = true;
    else errors.push({ path: "include", message: `include may only be "shots" (got "${inc}")` });
  }
  return errors.length ? { status: 400, body: { error: "Invalid query.", errors } } : out;
}

/** The selection's conditions on shots: the sensor, the period, the sessions and the reader's projects. */
export function selectionWhere(db: Db, sensorId: string, q: ReportQuery, projectIds: ProjectFilter): SQL[] {
  const where = [eq(shots.sensorId, sensorId), ...periodWhere(q.from, q.to)];
  if (q.sessionIds?.length) where.push(inArray(shots.sessionId, q.sessionIds));
  if (projectIds) {
    where.push(projectIds.length ? inArray(shots.sessionId, db.select({ id: checkSessions.id }).from(checkSessions).where(inArray(checkSessions.projectId, projectIds))) : sql`0`);
  }
  return where;
}

export const sessionsQuery = (db: Db, sensorId: string) => db.select({ id: checkSessions.id, startedAt: checkSessions.startedAt }).from(checkSessions).where(eq(checkSessions.sensorId, sensorId));

export const queryKey = (sensorId: string, q: ReportQuery, projectIds: ProjectFilter) =>
  JSON.stringify([
    sensorId,
    q.from ? periodDay(q.from) : null,
    q.to ? periodDay(q.to) : null,
    [...new Set(q.sessionIds ?? [])].sort(),
    q.projectId ?? null,
    projectIds ? [...projectIds].sort() : null,
  ]);

export function checkedQuery(query: ReportQuery | URLSearchParams): ReportQuery | QueryError {
  const q = query instanceof URLSearchParams ? parseReportQuery(query) : query;
  if ("status" in q) return q;
  for (const key of ["from", "to"] as const) {
    const v = q[key];
    if (v && !periodDay(v)) return { status: 400, body: { error: "Invalid query.", errors: [{ path: key, message: `${key} must be a date (YYYY-MM-DD)` }] } };
  }
  return q;
}
