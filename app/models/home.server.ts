// The start page of someone who reads reports only (issue 14): their projects, and under each the
// project's sensors with the verdict of that project's own check-shots by that project's rule.
// The sessions are named explicitly (ReportQuery.sessionIds), so a sensor shared with another
// client's project never mixes the other client's shots into this verdict. Only the actor's own
// projects are listed (scopeOf); an admin's home keeps its work-area cards.
import { and, asc, desc, eq, inArray, isNull } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { checkSessions, projectSensors, projects, sensors } from "~/db/schema";
import type { Actor } from "./actor";
import { buildSensorReport } from "./reports.server";
import { scopeOf } from "./scope.server";

type Verdict = "pass" | "fail" | "insufficient";

export type HomeProject = {
  id: string;
  name: string;
  client: string;
  sensors: { id: string; label: string; verdict: Verdict; n: number; rmseMm: number | null; lastSessionAt: string | null; href: string }[];
};

export async function projectsHome(actor: Actor): Promise<HomeProject[]> {
  const scope = await scopeOf(actor);
  if (scope.all || scope.projectIds.length === 0) return [];
  const db = getDb();
  const rows = await db
    .select({ id: projects.id, name: projects.name, client: projects.client })
    .from(projects)
    .where(and(inArray(projects.id, scope.projectIds), isNull(projects.retiredAt)))
    .orderBy(asc(projects.name));
  const out: HomeProject[] = [];
  for (const p of rows) {
    const [used, sessions] = await Promise.all([
      db
        .select({ id: sensors.id, label: sensors.label })
        .from(projectSensors)
        .innerJoin(sensors, eq(sensors.id, projectSensors.sensorId))
        .where(and(eq(projectSensors.projectId, p.id), isNull(sensors.retiredAt)))
        .orderBy(asc(sensors.label)),
      db
        .select({ id: checkSessions.id, sensorId: checkSessions.sensorId, startedAt: checkSessions.startedAt })
        .from(checkSessions)
        .where(eq(checkSessions.projectId, p.id))
        .orderBy(desc(checkSessions.startedAt)),
    ]);
    const list: HomeProject["sensors"] = [];
    for (const s of used) {
      const mine = sessions.filter((x) => x.sensorId === s.id);
      // No session of this project yet: nothing to judge (an empty session list would mean "all sessions").
      if (mine.length === 0) {
        list.push({ id: s.id, label: s.label, verdict: "insufficient", n: 0, rmseMm: null, lastSessionAt: null, href: reportHref(s.id, p.id, []) });
        continue;
      }
      const report = await buildSensorReport(actor, s.id, { projectId: p.id, sessionIds: mine.map((x) => x.id) });
      if (!report) continue;
      list.push({
        id: s.id,
        label: s.label,
        verdict: report.verdict,
        n: report.n,
        rmseMm: report.rmseMm,
        lastSessionAt: mine[0]!.startedAt,
        href: reportHref(
          s.id,
          p.id,
          mine.map((x) => x.id),
        ),
      });
    }
    out.push({ ...p, sensors: list });
  }
  return out;
}

/** The sensor report with the same project rule and the same sessions as the verdict shown. */
function reportHref(sensorId: string, projectId: string, sessionIds: string[]) {
  const q = new URLSearchParams({ project: projectId });
  for (const id of sessionIds) q.append("session", id);
  return `/review/sensors/${encodeURIComponent(sensorId)}?${q}`;
}
