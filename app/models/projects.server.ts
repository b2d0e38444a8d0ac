// Projects: a client's job with its acceptance rule (ranging.md §6) and the sensors and sites
// it uses. A rule change recomputes the shots of the project's sensors.
import { asc, eq, inArray, isNull, sql } from "drizzle-orm";
import { DEFAULT_RULE, type Rule } from "~/domain";
import { getDb, type Db } from "~/db/client.server";
import { edms, projectEdms, projectSensors, projectSites, projectTapes, projects, sensors, sites, tapes } from "~/db/schema";
import { audit } from "~/models/audit.server";
import { invalid, issuesToErrors, projectSchema, stableStringify, type FieldError, type NotFound, type ProjectBody, type RegistryResult } from "~/contract/registry";
import { actorId, changedFields, createRegistryRecord, nowIso, restoreRecord, retireRecord, type CreateRule, type RegistryActor, type Retirable } from "~/models/registry-upsert.server";
import { sensorsExist } from "~/models/sensors.server";
import { recomputeShotsForProject } from "~/models/recompute.server";
import { RULE_COLUMNS, ruleOf } from "~/models/registry-context.server";
import { sitesExist } from "~/models/sites.server";

export type ProjectRow = typeof projects.$inferSelect;
export type ProjectWithLinks = ProjectRow & { sensorIds: string[]; siteIds: string[]; tapeIds: string[]; edmIds: string[] };

// the EDM figures are each EDM shot's stored u_ref (ranging.md §7): they recompute too
const RULE_FIELDS = ["minShots", "coverageK", "minWithinPct", "rangeBandEdgesM", "edmUncertaintyMm", "edmUncertaintyPpm"] as const;

export function contentOf(b: ProjectBody, withNotes: boolean) {
  return {
    name: b.name,
    client: b.client,
    minShots: b.minShots,
    coverageK: b.coverageK,
    minWithinPct: b.minWithinPct,
    rangeBandEdgesM: b.rangeBandEdgesM,
    referenceRatio: b.referenceRatio,
    referenceInVerdict: b.referenceInVerdict,
    statement: b.statement,
    edmUncertaintyMm: b.edmUncertaintyMm ?? null,
    edmUncertaintyPpm: b.edmUncertaintyPpm ?? null,
    sensorIds: [...new Set(b.sensorIds)].sort(),
    siteIds: [...new Set(b.siteIds)].sort(),
    // issue 14: compared and written only when the body gives them (older bodies leave them be)
    ...(b.tapeIds !== undefined ? { tapeIds: [...new Set(b.tapeIds)].sort() } : {}),
    ...(b.edmIds !== undefined ? { edmIds: [...new Set(b.edmIds)].sort() } : {}),
    ...(withNotes ? { notes: b.notes ?? "" } : {}),
  };
}

export function rowContent(r: ProjectWithLinks, withNotes: boolean, links: { tapeIds: boolean; edmIds: boolean } = { tapeIds: true, edmIds: true }) {
  return {
    name: r.name,
    client: r.client,
    minShots: r.minShots,
    coverageK: r.coverageK,
    minWithinPct: r.minWithinPct,
    rangeBandEdgesM: r.rangeBandEdgesM,
    referenceRatio: r.referenceRatio,
    referenceInVerdict: r.referenceInVerdict,
    statement: r.statement,
    edmUncertaintyMm: r.edmUncertaintyMm ?? null,
    edmUncertaintyPpm: r.edmUncertaintyPpm ?? null,
    sensorIds: [...r.sensorIds].sort(),
    siteIds: [...r.siteIds].sort(),
    ...(links.tapeIds ? { tapeIds: [...r.tapeIds].sort() } : {}),
    ...(links.edmIds ? { edmIds: [...r.edmIds].sort() } : {}),
    ...(withNotes ? { notes: r.notes } : {}),
  };
}

/** Which of the optional link lists a body gives (issue 14: tapes and EDMs). */
export const linksGiven = (b: Pick<ProjectBody, "tapeIds" | "edmIds">) => ({ tapeIds: b.tapeIds !== undefined, edmIds: b.edmIds !== undefined });

function sameContent(r: ProjectWithLinks, b: ProjectBody) {
  const withNotes = b.notes !== undefined;
  return stableStringify(rowContent(r, withNotes, linksGiven(b))) === stableStringify(contentOf(b, withNotes));
}

async function parseProject(body: unknown) {
  const parsed = projectSchema.safeParse(body);
  if (!parsed.success) return { ok: false as const, result: invalid(issuesToErrors(parsed.error.issues)) };
  const b = parsed.data;
  const [haveSensors, haveSites] = await Promise.all([sensorsExist(b.sensorIds), sitesExist(b.siteIds)]);
  const errors: FieldError[] = [];
  b.sensorIds.forEach((id, i) => haveSensors.has(id) || errors.push({ path: `sensorIds.${i}`, message: `No sensor with id "${id}"` }));
  b.siteIds.forEach((id, i) => haveSites.has(id) || errors.push({ path: `siteIds.${i}`, message: `No site with id "${id}"` }));
  errors.push(...(await unknownTapesEdms(b)));
  if (errors.length) return { ok: false as const, result: invalid(errors) };
  return { ok: true as const, value: b };
}

/** issue 14: the errors of tapeIds / edmIds naming no tape or EDM (path `tapeIds.N`, `edmIds.N`). */
export async function unknownTapesEdms(b: Pick<ProjectBody, "tapeIds" | "edmIds">): Promise<FieldError[]> {
  const db = getDb();
  const [t, e] = await Promise.all([
    b.tapeIds?.length
      ? db
          .select({ id: tapes.id })
          .from(tapes)
          .where(inArray(tapes.id, [...new Set(b.tapeIds)]))
      : [],
    b.edmIds?.length
      ? db
          .select({ id: edms.id })
          .from(edms)
          .where(inArray(edms.id, [...new Set(b.edmIds)]))
      : [],
  ]);
  const haveT = new Set(t.map((r) => r.id));
  const haveE = new Set(e.map((r) => r.id));
  const errors: FieldError[] = [];
  (b.tapeIds ?? []).forEach((id, i) => haveT.has(id) || errors.push({ path: `tapeIds.${i}`, message: `No tape with id "${id}"` }));
  (b.edmIds ?? []).forEach((id, i) => haveE.has(id) || errors.push({ path: `edmIds.${i}`, message: `No reference EDM with id "${id}"` }));
  return errors;
}

/** issue 14: replaces a project's tapes or EDMs (only the lists given). */
export async function writeTapeEdmLinks(tx: Pick<Db, "insert" | "delete">, projectId: string, links: { tapeIds?: string[]; edmIds?: string[] }, replace: boolean) {
  if (links.tapeIds) {
    if (replace) await tx.delete(projectTapes).where(eq(projectTapes.projectId, projectId));
    if (links.tapeIds.length) await tx.insert(projectTapes).values(links.tapeIds.map((tapeId) => ({ projectId, tapeId })));
  }
  if (links.edmIds) {
    if (replace) await tx.delete(projectEdms).where(eq(projectEdms.projectId, projectId));
    if (links.edmIds.length) await tx.insert(projectEdms).values(links.edmIds.map((edmId) => ({ projectId, edmId })));
  }
}

const PROJECT_CREATE: CreateRule<ProjectBody, ProjectWithLinks> = {
  noun: "project",
  parse: parseProject,
  byId: getProject,
  async twins(b) {
    const twins = await getDb().select({ id: projects.id }).from(projects).where(eq(projects.name, b.name));
    const full: ProjectWithLinks[] = [];
    for (const t of twins) {
      const project = await getProject(t.id);
      if (project) full.push(project);
    }
    return full;
  },
  same: sameContent,
  answer: (r) => ({ id: r.id }),
  async insert(actor, id, b) {
    const { sensorIds, siteIds, tapeIds, edmIds, ...cols } = contentOf(b, true);
    await getDb().transaction(async (tx) => {
      await tx.insert(projects).values({ id, ...cols });
      if (sensorIds.length) await tx.insert(projectSensors).values(sensorIds.map((sensorId) => ({ projectId: id, sensorId })));
      if (siteIds.length) await tx.insert(projectSites).values(siteIds.map((siteId) => ({ projectId: id, siteId })));
      await writeTapeEdmLinks(tx, id, { tapeIds, edmIds }, false);
      await audit(actorId(actor), "create", "project", id, { id, ...cols, sensorIds, siteIds, tapeIds: tapeIds ?? [], edmIds: edmIds ?? [] }, tx);
    });
    return { status: 201, body: { id } };
  },
};

export async function createProject(actor: RegistryActor, body: unknown): Promise<RegistryResult> {
  return createRegistryRecord(PROJECT_CREATE, actor, body);
}

/** The whole project again; a changed rule recomputes the shots of every sensor it touches. */
export async function updateProject(actor: RegistryActor, id: string, body: unknown): Promise<RegistryResult | NotFound> {
  const p = await parseProject(body);
  if (!p.ok) return p.result;
  const before = await getProject(id);
  if (!before) return { status: 404, body: { error: `No project with id "${id}".` } };
  const after = contentOf(p.value, true);
  const changes = changedFields(rowContent(before, true, linksGiven(p.value)), after);
  if (Object.keys(changes).length === 0) return { status: 200, body: { id, changed: [] } };
  const { sensorIds, siteIds, tapeIds, edmIds, ...cols } = after;
  await getDb().transaction(async (tx) => {
    await tx
      .update(projects)
      .set({ ...cols, updatedAt: nowIso() })
      .where(eq(projects.id, id));
    // Link rows only say which sensors and sites a project uses; shots never refer to them.
    if ("sensorIds" in changes) {
      await tx.delete(projectSensors).where(eq(projectSensors.projectId, id));
      if (sensorIds.length) await tx.insert(projectSensors).values(sensorIds.map((sensorId) => ({ projectId: id, sensorId })));
    }
    if ("siteIds" in changes) {
      await tx.delete(projectSites).where(eq(projectSites.projectId, id));
      if (siteIds.length) await tx.insert(projectSites).values(siteIds.map((siteId) => ({ projectId: id, siteId })));
    }
    // issue 14: the crews' tapes and EDMs; which shots used them stays in the shots' raw records
    await writeTapeEdmLinks(tx, id, { tapeIds: "tapeIds" in changes ? tapeIds : undefined, edmIds: "edmIds" in changes ? edmIds : undefined }, true);
    await audit(actorId(actor), "update", "project", id, changes, tx);
  });
  // Shots of this project's sessions carry a per-shot limit k·T: a rule change recomputes them.
  const recomputed = RULE_FIELDS.some((f) => f in changes) ? await recomputeShotsForProject(id) : 0;
  return { status: 200, body: { id, changed: Object.keys(changes), recomputed } };
}

const PROJECT_RETIRE: Retirable = {
  entity: "project",
  noun: "project",
  retiredAt: async (id) => (await getDb().select({ retiredAt: projects.retiredAt }).from(projects).where(eq(projects.id, id)).limit(1))[0] ?? null,
  setRetired: (tx, id, retiredAt, at) => tx.update(projects).set({ retiredAt, updatedAt: at }).where(eq(projects.id, id)),
};

export const retireProject = (actor: RegistryActor, id: string, reason = "") => retireRecord(PROJECT_RETIRE, actor, id, reason);
export const restoreProject = (actor: RegistryActor, id: string) => restoreRecord(PROJECT_RETIRE, actor, id);

export type ProjectListRow = ProjectRow & { sensorLabels: string; siteNames: string };

export async function listProjects({ includeRetired = false }: { includeRetired?: boolean } = {}): Promise<ProjectListRow[]> {
  const rows = await getDb()
    .select({
      project: projects,
      sensorLabels: sql<string>`coalesce((select group_concat(s.label, ', ') from project_sensors ps join sensors s on s.id = ps.sensor_id where ps.project_id = "projects"."id"), '')`,
      siteNames: sql<string>`coalesce((select group_concat(s.name, ', ') from project_sites ps join sites s on s.id = ps.site_id where ps.project_id = "projects"."id"), '')`,
    })
    .from(projects)
    .where(includeRetired ? undefined : isNull(projects.retiredAt))
    .orderBy(asc(projects.name));
  return rows.map((r) => ({ ...r.project, sensorLabels: String(r.sensorLabels), siteNames: String(r.siteNames) }));
}

export async function getProject(id: string): Promise<ProjectWithLinks | null> {
  const db = getDb();
  const [row] = await db.select().from(projects).where(eq(projects.id, id)).limit(1);
  if (!row) return null;
  const [ps, ss, ts, es] = await Promise.all([
    db.select({ id: projectSensors.sensorId }).from(projectSensors).where(eq(projectSensors.projectId, id)),
    db.select({ id: projectSites.siteId }).from(projectSites).where(eq(projectSites.projectId, id)),
    db.select({ id: projectTapes.tapeId }).from(projectTapes).where(eq(projectTapes.projectId, id)),
    db.select({ id: projectEdms.edmId }).from(projectEdms).where(eq(projectEdms.projectId, id)),
  ]);
  return { ...row, sensorIds: ps.map((r) => r.id), siteIds: ss.map((r) => r.id), tapeIds: ts.map((r) => r.id), edmIds: es.map((r) => r.id) };
}

/** The acceptance rule of a project; DEFAULT_RULE (ranging.md §6) when there is none. */
export async function getProjectRule(projectId: string | null): Promise<Rule> {
  if (projectId) {
    const [row] = await getDb().select(RULE_COLUMNS).from(projects).where(eq(projects.id, projectId)).limit(1);
    if (row) return ruleOf(row);
  }
  return { ...DEFAULT_RULE, rangeBandEdgesM: [...DEFAULT_RULE.rangeBandEdgesM] };
}

/** Choices for the project form's sensor and site boxes (retired ones only when already linked). */
export async function projectChoices(linked: { sensorIds: string[]; siteIds: string[]; tapeIds?: string[]; edmIds?: string[] } = { sensorIds: [], siteIds: [] }) {
  const db = getDb();
  const [ss, st, ts, es] = await Promise.all([
    db.select({ id: sensors.id, label: sensors.label, serial: sensors.serial, retiredAt: sensors.retiredAt }).from(sensors).orderBy(asc(sensors.label)),
    db.select({ id: sites.id, name: sites.name, retiredAt: sites.retiredAt }).from(sites).orderBy(asc(sites.name)),
    db.select({ id: tapes.id, label: tapes.label, certDue: tapes.certDue, retiredAt: tapes.retiredAt }).from(tapes).orderBy(asc(tapes.label)),
    db.select({ id: edms.id, label: edms.label, serial: edms.serial, certDue: edms.certDue, retiredAt: edms.retiredAt }).from(edms).orderBy(asc(edms.label)),
  ]);
  return {
    sensors: ss.filter((s) => !s.retiredAt || linked.sensorIds.includes(s.id)),
    sites: st.filter((s) => !s.retiredAt || linked.siteIds.includes(s.id)),
    tapes: ts.filter((t) => !t.retiredAt || (linked.tapeIds ?? []).includes(t.id)),
    edms: es.filter((e) => !e.retiredAt || (linked.edmIds ?? []).includes(e.id)),
  };
}
