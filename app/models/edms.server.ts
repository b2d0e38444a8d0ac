// Reference EDMs (issue 15, ranging.md §7): the instruments that measure EDM reference
// distances, with their standard uncertainty a + b·D and calibration certificate. A shot that
// names one (`reference.edmId`) takes its u_ref from here; a certificate past due on a
// session's date is flagged on the report's traceability. Never deleted, only retired.
import { and, asc, eq, isNull } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { edms, projects, projectEdms } from "~/db/schema";
import type { Actor } from "~/models/actor";
import { edmListedInScope, projectColInScope, scopeOf } from "~/models/scope.server";
import { audit } from "~/models/audit.server";
import { certificateColumns, edmSchema, invalid, issuesToErrors, stableStringify, type EdmBody, type NotFound, type RegistryResult } from "~/contract/registry";
import { actorId, changedFields, isConstraintError, nowIso, type RegistryActor } from "~/models/sensors.server";
import { recomputeShotsForEdm } from "~/models/shots.server";

export type EdmRow = typeof edms.$inferSelect;

function contentOf(b: EdmBody, withNotes: boolean) {
  return {
    label: b.label,
    serial: b.serial,
    uncertaintyMm: b.uncertaintyMm,
    uncertaintyPpm: b.uncertaintyPpm,
    ...certificateColumns(b.certificate),
    ...(withNotes ? { notes: b.notes ?? "" } : {}),
  };
}

function rowContent(r: EdmRow, withNotes: boolean) {
  return {
    label: r.label,
    serial: r.serial,
    uncertaintyMm: r.uncertaintyMm,
    uncertaintyPpm: r.uncertaintyPpm,
    certNumber: r.certNumber ?? null,
    certLaboratory: r.certLaboratory ?? null,
    certIssued: r.certIssued ?? null,
    certDue: r.certDue ?? null,
    ...(withNotes ? { notes: r.notes } : {}),
  };
}

function sameContent(r: EdmRow, b: EdmBody) {
  const withNotes = b.notes !== undefined;
  return stableStringify(rowContent(r, withNotes)) === stableStringify(contentOf(b, withNotes));
}

function parseEdm(body: unknown) {
  const parsed = edmSchema.safeParse(body);
  return parsed.success ? { ok: true as const, value: parsed.data } : { ok: false as const, result: invalid(issuesToErrors(parsed.error.issues)) };
}

/** POST /api/edms, the admin form and the seed: 201 new, 200 same body again, 400, 409. */
export async function createEdm(actor: RegistryActor, body: unknown): Promise<RegistryResult> {
  return createEdmOnce(actor, body, true);
}

async function createEdmOnce(actor: RegistryActor, body: unknown, retry: boolean): Promise<RegistryResult> {
  const p = parseEdm(body);
  if (!p.ok) return p.result;
  const b = p.value;
  const db = getDb();
  if (b.id) {
    const existing = await getEdm(b.id);
    if (existing) {
      return sameContent(existing, b) ? { status: 200, body: { id: existing.id } } : { status: 409, body: { error: `A reference EDM with id "${b.id}" exists with other content.` } };
    }
  } else {
    const twins = await db.select().from(edms).where(eq(edms.serial, b.serial));
    const twin = twins.find((r) => sameContent(r, b));
    if (twin) return { status: 200, body: { id: twin.id } };
  }
  const id = b.id ?? crypto.randomUUID();
  const values = { id, ...contentOf(b, true) };
  try {
    await db.transaction(async (tx) => {
      await tx.insert(edms).values(values);
      await audit(actorId(actor), "create", "edm", id, values, tx);
    });
  } catch (e) {
    if (retry && isConstraintError(e)) return createEdmOnce(actor, body, false);
    throw e;
  }
  return { status: 201, body: { id } };
}

export async function updateEdm(actor: RegistryActor, id: string, body: unknown): Promise<RegistryResult | NotFound> {
  const p = parseEdm(body);
  if (!p.ok) return p.result;
  const before = await getEdm(id);
  if (!before) return { status: 404, body: { error: `No reference EDM with id "${id}".` } };
  const after = contentOf(p.value, true);
  const changes = changedFields(rowContent(before, true), after);
  if (Object.keys(changes).length === 0) return { status: 200, body: { id, changed: [] } };
  await getDb().transaction(async (tx) => {
    await tx
      .update(edms)
      .set({ ...after, updatedAt: nowIso() })
      .where(eq(edms.id, id));
    await audit(actorId(actor), "update", "edm", id, changes, tx);
  });
  // u_ref of the shots that name this EDM is stored with them: recompute those
  const recomputed = "uncertaintyMm" in changes || "uncertaintyPpm" in changes ? await recomputeShotsForEdm(id) : 0;
  return { status: 200, body: { id, changed: Object.keys(changes), recomputed } };
}

export async function retireEdm(actor: RegistryActor, id: string, reason = ""): Promise<RegistryResult | NotFound> {
  const row = await getEdm(id);
  if (!row) return { status: 404, body: { error: `No reference EDM with id "${id}".` } };
  if (row.retiredAt) return { status: 200, body: { id, retiredAt: row.retiredAt } };
  const at = nowIso();
  await getDb().transaction(async (tx) => {
    await tx.update(edms).set({ retiredAt: at, updatedAt: at }).where(eq(edms.id, id));
    await audit(actorId(actor), "retire", "edm", id, { reason }, tx);
  });
  return { status: 200, body: { id, retiredAt: at } };
}

export async function restoreEdm(actor: RegistryActor, id: string): Promise<RegistryResult | NotFound> {
  const row = await getEdm(id);
  if (!row) return { status: 404, body: { error: `No reference EDM with id "${id}".` } };
  if (!row.retiredAt) return { status: 200, body: { id } };
  await getDb().transaction(async (tx) => {
    await tx.update(edms).set({ retiredAt: null, updatedAt: nowIso() }).where(eq(edms.id, id));
    await audit(actorId(actor), "restore", "edm", id, { retiredAt: row.retiredAt }, tx);
  });
  return { status: 200, body: { id } };
}

/**
 * issue 14: an admin lists every edm; anyone else only those their projects list, each with
 * the ids of those of their projects that list it.
 */
export async function listEdms(actor: Pick<Actor, "id" | "role">, { includeRetired = false }: { includeRetired?: boolean } = {}): Promise<(EdmRow & { projectIds: string[] })[]> {
  const db = getDb();
  const scope = await scopeOf(actor, db);
  const [rows, links] = await Promise.all([
    db
      .select()
      .from(edms)
      .where(and(includeRetired ? undefined : isNull(edms.retiredAt), edmListedInScope(scope, edms.id)))
      .orderBy(asc(edms.label)),
    db.select({ projectId: projectEdms.projectId, id: projectEdms.edmId }).from(projectEdms).where(projectColInScope(scope, projectEdms.projectId)),
  ]);
  const byId = new Map<string, string[]>();
  for (const l of links) byId.set(l.id, [...(byId.get(l.id) ?? []), l.projectId]);
  return rows.map((r) => ({ ...r, projectIds: (byId.get(r.id) ?? []).sort() }));
}

/** One edm as the actor may see it, with the projects (of theirs) that list it; null answers like "no such edm". */
export async function getEdmFor(actor: Pick<Actor, "id" | "role">, id: string): Promise<(EdmRow & { projects: { id: string; name: string }[] }) | null> {
  const db = getDb();
  const scope = await scopeOf(actor, db);
  const [row] = await db
    .select()
    .from(edms)
    .where(and(eq(edms.id, id), edmListedInScope(scope, edms.id)))
    .limit(1);
  if (!row) return null;
  const ps = await db
    .select({ id: projects.id, name: projects.name })
    .from(projectEdms)
    .innerJoin(projects, eq(projects.id, projectEdms.projectId))
    .where(and(eq(projectEdms.edmId, id), projectColInScope(scope, projectEdms.projectId)))
    .orderBy(asc(projects.name));
  return { ...row, projects: ps };
}

export async function getEdm(id: string): Promise<EdmRow | null> {
  const [row] = await getDb().select().from(edms).where(eq(edms.id, id)).limit(1);
  return row ?? null;
}

/**
 * GET /api/edms (issue 14): the live reference EDMs of the actor's projects (admins: all), each with
 * `projectIds` (those of the actor's projects that list it); `?project=` narrows to one project,
 * and a project the actor cannot see answers 404 like an unknown one.
 */
export async function edmsJson(actor: Pick<Actor, "id" | "role">, params: URLSearchParams): Promise<{ status: 200 | 404; body: unknown }> {
  const project = params.get("project");
  if (project) {
    const scope = await scopeOf(actor);
    const [p] = await getDb()
      .select({ id: projects.id })
      .from(projects)
      .where(and(eq(projects.id, project), projectColInScope(scope, projects.id)))
      .limit(1);
    if (!p) return { status: 404, body: { error: `No project with id "${project}".` } };
  }
  const rows = (await listEdms(actor)).filter((r) => !project || r.projectIds.includes(project));
  return { status: 200, body: { edms: rows.map(({ createdAt: _c, updatedAt: _u, retiredAt: _r, ...r }) => r) } };
}
