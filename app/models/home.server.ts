// The start page of someone who reads reports only (issue 14): their projects, and under each the
// project's sensors with the verdict by the project's rule, from the same summaries as
// GET /api/sensors?project=… (reports.server.ts). Only the actor's own projects are listed
// (scopeOf); an admin's home keeps its work-area cards and gets no list here.
import { asc, inArray, isNull, and } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { projects } from "~/db/schema";
import type { Actor } from "./actor";
import { listSensorSummaries } from "./reports.server";
import { scopeOf } from "./scope.server";

export type HomeProject = {
  id: string;
  name: string;
  client: string;
  sensors: { id: string; label: string; verdict: "pass" | "fail" | "insufficient"; n: number; rmseMm: number | null; lastShotAt: string | null }[];
};

export async function projectsHome(actor: Actor): Promise<HomeProject[]> {
  const scope = await scopeOf(actor);
  if (scope.all || scope.projectIds.length === 0) return [];
  const rows = await getDb()
    .select({ id: projects.id, name: projects.name, client: projects.client })
    .from(projects)
    .where(and(inArray(projects.id, scope.projectIds), isNull(projects.retiredAt)))
    .orderBy(asc(projects.name));
  const out: HomeProject[] = [];
  for (const p of rows) {
    const r = await listSensorSummaries(actor, { projectId: p.id });
    const sensors = r.status === 200 ? r.body.sensors.map((s) => ({ id: s.id, label: s.label, verdict: s.verdict, n: s.n, rmseMm: s.rmseMm, lastShotAt: s.lastShotAt })) : [];
    out.push({ ...p, sensors });
  }
  return out;
}
