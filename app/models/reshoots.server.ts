// Re-shoot requests (issue 12): QA asks the crew to shoot a sensor again at a site, says what
// and why; the request rides in the tablet's reference data while it is open and QA closes it
// (done, or withdrawn). Scoping (api.md v1.1): a request belongs to its project when it names
// one; otherwise to every project holding both its sensor and its site. Outside the actor's
// projects it does not exist (404, left out of lists).
import { and, asc, desc, eq, isNull } from "drizzle-orm";
import { alias } from "drizzle-orm/sqlite-core";
import { getDb } from "~/db/client.server";
import { projects, projectSensors, projectSites, reshootRequests, sensors, sites, users } from "~/db/schema";
import { audit } from "~/models/audit.server";
import { anyInScope, inScope, scopeOf, type Scope } from "~/models/scope.server";
import type { Actor } from "~/models/actor";
import type { ReshootInput } from "~/contract/reshoot";
import type { RefReshoot } from "~/offline/types";

import { AppError } from "~/contract/errors";

/** The sensor screen catches this name (issue 13: the one AppError; kept for that screen until it imports AppError). */
export { AppError as ReshootError };

export type ReshootState = "open" | "done" | "withdrawn";

export type ReshootRow = {
  id: string;
  sensorId: string;
  siteId: string;
  siteName: string;
  projectId: string | null;
  projectName: string | null;
  wanted: string;
  reason: string;
  byName: string;
  createdAt: string;
  state: ReshootState;
  closedAt: string | null;
  closedByName: string | null;
};

/** Project ids holding each sensor and each site (non-retired projects). */
async function holdings() {
  const db = getDb();
  const live = await db.select({ id: projects.id }).from(projects).where(isNull(projects.retiredAt));
  const liveIds = new Set(live.map((p) => p.id));
  const [ps, pSites] = await Promise.all([
    db.select({ projectId: projectSensors.projectId, sensorId: projectSensors.sensorId }).from(projectSensors),
    db.select({ projectId: projectSites.projectId, siteId: projectSites.siteId }).from(projectSites),
  ]);
  const bySensor = new Map<string, Set<string>>();
  const bySite = new Map<string, Set<string>>();
  for (const r of ps) if (liveIds.has(r.projectId)) bySensor.set(r.sensorId, (bySensor.get(r.sensorId) ?? new Set()).add(r.projectId));
  for (const r of pSites) if (liveIds.has(r.projectId)) bySite.set(r.siteId, (bySite.get(r.siteId) ?? new Set()).add(r.projectId));
  return {
    ofSensor: (id: string) => [...(bySensor.get(id) ?? [])],
    ofSite: (id: string) => [...(bySite.get(id) ?? [])],
    /** Projects holding both the sensor and the site. */
    ofBoth: (sensorId: string, siteId: string) => [...(bySensor.get(sensorId) ?? [])].filter((p) => bySite.get(siteId)?.has(p)),
  };
}

type Holdings = Awaited<ReturnType<typeof holdings>>;

function visible(scope: Scope, h: Holdings, r: { sensorId: string; siteId: string; projectId: string | null }) {
  if (r.projectId) return inScope(scope, r.projectId);
  return anyInScope(scope, h.ofBoth(r.sensorId, r.siteId));
}

/** The sites QA may name in a request for this sensor (in the actor's projects), and the actor's projects holding the sensor. */
export async function reshootChoices(actor: Actor, sensorId: string) {
  const db = getDb();
  const [scope, h, siteRows, projectRows] = await Promise.all([
    scopeOf(actor),
    holdings(),
    db.select({ id: sites.id, name: sites.name }).from(sites).where(isNull(sites.retiredAt)).orderBy(asc(sites.name)),
    db.select({ id: projects.id, name: projects.name }).from(projects).where(isNull(projects.retiredAt)).orderBy(asc(projects.name)),
  ]);
  const sensorProjects = h.ofSensor(sensorId);
  return {
    sites: siteRows.filter((s) => anyInScope(scope, h.ofSite(s.id))),
    projects: projectRows.filter((p) => inScope(scope, p.id) && sensorProjects.includes(p.id)),
  };
}

const closer = alias(users, "closer");

async function rows(where: ReturnType<typeof and> | undefined): Promise<ReshootRow[]> {
  return getDb()
    .select({
      id: reshootRequests.id,
      sensorId: reshootRequests.sensorId,
      siteId: reshootRequests.siteId,
      siteName: sites.name,
      projectId: reshootRequests.projectId,
      projectName: projects.name,
      wanted: reshootRequests.wanted,
      reason: reshootRequests.reason,
      byName: users.name,
      byEmail: users.email,
      createdAt: reshootRequests.createdAt,
      state: reshootRequests.state,
      closedAt: reshootRequests.closedAt,
      closedByName: closer.name,
      closedByEmail: closer.email,
    })
    .from(reshootRequests)
    .innerJoin(sites, eq(sites.id, reshootRequests.siteId))
    .innerJoin(users, eq(users.id, reshootRequests.byUserId))
    .leftJoin(closer, eq(closer.id, reshootRequests.closedBy))
    .leftJoin(projects, eq(projects.id, reshootRequests.projectId))
    .where(where)
    .orderBy(desc(reshootRequests.createdAt))
    .then((list) =>
      list.map(({ byEmail, closedByEmail, ...r }) => ({
        ...r,
        // A user invited without a name is still someone the crew can ask: fall back to the address.
        byName: r.byName || byEmail,
        closedByName: r.closedAt ? r.closedByName || closedByEmail || null : null,
      })),
    );
}

/** Every request for this sensor the actor may see, newest first, in every state. */
export async function listReshoots(actor: Actor, sensorId: string): Promise<ReshootRow[]> {
  const [scope, h, list] = await Promise.all([scopeOf(actor), holdings(), rows(eq(reshootRequests.sensorId, sensorId))]);
  return list.filter((r) => visible(scope, h, r));
}

/** The open requests the tablet carries in its reference data (only what the user may see). */
export async function openReshootsFor(actor: Actor): Promise<RefReshoot[]> {
  const [scope, h, list] = await Promise.all([scopeOf(actor), holdings(), rows(eq(reshootRequests.state, "open"))]);
  return list
    .filter((r) => visible(scope, h, r))
    .map((r) => ({ id: r.id, sensorId: r.sensorId, siteId: r.siteId, projectId: r.projectId, wanted: r.wanted, reason: r.reason, byName: r.byName, createdAt: r.createdAt }));
}

export async function createReshoot(actor: Actor, sensorId: string, input: Omit<ReshootInput, "intent">): Promise<ReshootRow> {
  const db = getDb();
  const [scope, h] = await Promise.all([scopeOf(actor), holdings()]);
  const [sensor] = await db.select({ id: sensors.id, label: sensors.label, retiredAt: sensors.retiredAt }).from(sensors).where(eq(sensors.id, sensorId)).limit(1);
  if (!sensor || !anyInScope(scope, h.ofSensor(sensorId))) throw new AppError(404, "There is no sensor with this id.");
  if (sensor.retiredAt) throw new AppError(400, `${sensor.label} is retired: the crew cannot shoot it any more.`, "siteId");
  const [site] = await db
    .select({ id: sites.id, name: sites.name })
    .from(sites)
    .where(and(eq(sites.id, input.siteId), isNull(sites.retiredAt)))
    .limit(1);
  if (!site || !anyInScope(scope, h.ofSite(site.id))) throw new AppError(400, "Choose one of the listed sites.", "siteId");
  const projectId = input.projectId || null;
  if (projectId) {
    const [p] = await db
      .select({ id: projects.id, name: projects.name })
      .from(projects)
      .where(and(eq(projects.id, projectId), isNull(projects.retiredAt)))
      .limit(1);
    if (!p || !inScope(scope, p.id)) throw new AppError(400, "Choose one of the listed projects.", "projectId");
    if (!h.ofBoth(sensorId, site.id).includes(p.id)) {
      throw new AppError(400, `${p.name} does not hold both ${sensor.label} and ${site.name}: its crew would not see the request. Add them to the project first, or choose another.`, "projectId");
    }
  } else if (!anyInScope(scope, h.ofBoth(sensorId, site.id))) {
    throw new AppError(400, `None of your projects holds both ${sensor.label} and ${site.name}: no crew would see the request.`, "siteId");
  }
  const [row] = await db.insert(reshootRequests).values({ sensorId, siteId: site.id, projectId, wanted: input.wanted, reason: input.reason, byUserId: actor.id }).returning({ id: reshootRequests.id });
  await audit(actor.id, "reshoot.request", "reshoot_request", row!.id, { sensorId, siteId: site.id, projectId, wanted: input.wanted, reason: input.reason });
  return (await rows(eq(reshootRequests.id, row!.id)))[0]!;
}

/** QA closes an open request: done (the shots came) or withdrawn (no longer wanted). */
export async function setReshootState(actor: Actor, sensorId: string, requestId: string, state: "done" | "withdrawn"): Promise<ReshootRow> {
  const db = getDb();
  const [scope, h] = await Promise.all([scopeOf(actor), holdings()]);
  const [r] = await db
    .select()
    .from(reshootRequests)
    .where(and(eq(reshootRequests.id, requestId), eq(reshootRequests.sensorId, sensorId)))
    .limit(1);
  if (!r || !visible(scope, h, r)) throw new AppError(404, "There is no re-shoot request with this id.");
  if (r.state !== "open") throw new AppError(400, `This request is already ${r.state === "done" ? "done" : "withdrawn"}.`, "state");
  const closedAt = new Date().toISOString();
  const updated = await db
    .update(reshootRequests)
    .set({ state, closedAt, closedBy: actor.id })
    // Only an open row changes: two reviewers closing at once leave the first answer standing.
    .where(and(eq(reshootRequests.id, r.id), eq(reshootRequests.state, "open")))
    .returning({ id: reshootRequests.id });
  if (!updated.length) throw new AppError(400, "Someone else closed this request a moment ago.", "state");
  await audit(actor.id, state === "done" ? "reshoot.done" : "reshoot.withdraw", "reshoot_request", r.id, { sensorId: r.sensorId, siteId: r.siteId });
  return (await rows(eq(reshootRequests.id, r.id)))[0]!;
}
