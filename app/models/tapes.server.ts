// Steel tapes used to set reference distances: their standard conditions and certificate
// correction feed the tape corrections of ranging.md §3. Never deleted, only retired.
import { and, asc, eq, isNull, sql } from "drizzle-orm";
import type { TapeSpec } from "~/domain";
import { getDb, type Db } from "~/db/client.server";
import { auditLog, checkSessions, edms, projectEdms, projectTapes, projects, shots, tapes } from "~/db/schema";
import type { Actor } from "~/models/actor";
import { tapeListedInScope, projectColInScope, scopeOf } from "~/models/scope.server";
import { audit } from "~/models/audit.server";
import { certificateColumns, invalid, issuesToErrors, stableStringify, tapeSchema, type NotFound, type RegistryResult, type TapeBody } from "~/contract/registry";
import { actorId, changedFields, isConstraintError, nowIso, type RegistryActor } from "~/models/sensors.server";
import { recomputeShotsForTape } from "~/models/shots.server";

export type TapeRow = typeof tapes.$inferSelect;

function contentOf(b: TapeBody, withNotes: boolean) {
  return {
    label: b.label,
    standardTempC: b.standardTempC,
    standardTensionN: b.standardTensionN,
    areaMm2: b.areaMm2,
    modulusGPa: b.modulusGPa,
    weightNPerM: b.weightNPerM,
    calibrationPpm: b.calibrationPpm,
    uncertaintyMm: b.uncertaintyMm ?? null,
    uncertaintyPpm: b.uncertaintyPpm ?? null,
    ...certificateColumns(b.certificate),
    ...(withNotes ? { notes: b.notes ?? "" } : {}),
  };
}

function rowContent(r: TapeRow, withNotes: boolean) {
  return {
    label: r.label,
    standardTempC: r.standardTempC,
    standardTensionN: r.standardTensionN,
    areaMm2: r.areaMm2,
    modulusGPa: r.modulusGPa,
    weightNPerM: r.weightNPerM,
    calibrationPpm: r.calibrationPpm,
    uncertaintyMm: r.uncertaintyMm ?? null,
    uncertaintyPpm: r.uncertaintyPpm ?? null,
    certNumber: r.certNumber ?? null,
    certLaboratory: r.certLaboratory ?? null,
    certIssued: r.certIssued ?? null,
    certDue: r.certDue ?? null,
    ...(withNotes ? { notes: r.notes } : {}),
  };
}

function sameContent(r: TapeRow, b: TapeBody) {
  const withNotes = b.notes !== undefined;
  return stableStringify(rowContent(r, withNotes)) === stableStringify(contentOf(b, withNotes));
}

function parseTape(body: unknown) {
  const parsed = tapeSchema.safeParse(body);
  return parsed.success ? { ok: true as const, value: parsed.data } : { ok: false as const, result: invalid(issuesToErrors(parsed.error.issues)) };
}

export async function createTape(actor: RegistryActor, body: unknown): Promise<RegistryResult> {
  return createTapeOnce(actor, body, true);
}

async function createTapeOnce(actor: RegistryActor, body: unknown, retry: boolean): Promise<RegistryResult> {
  const p = parseTape(body);
  if (!p.ok) return p.result;
  const b = p.value;
  const db = getDb();
  if (b.id) {
    const existing = await getTape(b.id);
    if (existing) {
      return sameContent(existing, b) ? { status: 200, body: { id: existing.id } } : { status: 409, body: { error: `A tape with id "${b.id}" exists with other content.` } };
    }
  } else {
    const twins = await db.select().from(tapes).where(eq(tapes.label, b.label));
    const twin = twins.find((r) => sameContent(r, b));
    if (twin) return { status: 200, body: { id: twin.id } };
  }
  const id = b.id ?? crypto.randomUUID();
  const values = { id, ...contentOf(b, true) };
  try {
    await db.transaction(async (tx) => {
      await tx.insert(tapes).values(values);
      await audit(actorId(actor), "create", "tape", id, values, tx);
    });
  } catch (e) {
    if (retry && isConstraintError(e)) return createTapeOnce(actor, body, false);
    throw e;
  }
  return { status: 201, body: { id } };
}

export async function updateTape(actor: RegistryActor, id: string, body: unknown): Promise<RegistryResult | NotFound> {
  const p = parseTape(body);
  if (!p.ok) return p.result;
  const before = await getTape(id);
  if (!before) return { status: 404, body: { error: `No tape with id "${id}".` } };
  const after = contentOf(p.value, true);
  const changes = changedFields(rowContent(before, true), after);
  if (Object.keys(changes).length === 0) return { status: 200, body: { id, changed: [] } };
  await getDb().transaction(async (tx) => {
    await tx
      .update(tapes)
      .set({ ...after, updatedAt: nowIso() })
      .where(eq(tapes.id, id));
    await audit(actorId(actor), "update", "tape", id, changes, tx);
  });
  // Tape-measured reference distances use these constants: recompute the shots that name this tape.
  // (the certificate's uncertainty is each shot's u_ref of ranging.md §7, stored with the shot)
  const spec = ["standardTempC", "standardTensionN", "areaMm2", "modulusGPa", "weightNPerM", "calibrationPpm", "uncertaintyMm", "uncertaintyPpm"].some((f) => f in changes);
  const recomputed = spec ? await recomputeShotsForTape(id) : 0;
  return { status: 200, body: { id, changed: Object.keys(changes), recomputed } };
}

export async function retireTape(actor: RegistryActor, id: string, reason = ""): Promise<RegistryResult | NotFound> {
  const row = await getTape(id);
  if (!row) return { status: 404, body: { error: `No tape with id "${id}".` } };
  if (row.retiredAt) return { status: 200, body: { id, retiredAt: row.retiredAt } };
  const at = nowIso();
  await getDb().transaction(async (tx) => {
    await tx.update(tapes).set({ retiredAt: at, updatedAt: at }).where(eq(tapes.id, id));
    await audit(actorId(actor), "retire", "tape", id, { reason }, tx);
  });
  return { status: 200, body: { id, retiredAt: at } };
}

export async function restoreTape(actor: RegistryActor, id: string): Promise<RegistryResult | NotFound> {
  const row = await getTape(id);
  if (!row) return { status: 404, body: { error: `No tape with id "${id}".` } };
  if (!row.retiredAt) return { status: 200, body: { id } };
  await getDb().transaction(async (tx) => {
    await tx.update(tapes).set({ retiredAt: null, updatedAt: nowIso() }).where(eq(tapes.id, id));
    await audit(actorId(actor), "restore", "tape", id, { retiredAt: row.retiredAt }, tx);
  });
  return { status: 200, body: { id } };
}

/**
 * issue 14: an admin lists every tape; anyone else only those their projects list, each with
 * the ids of those of their projects that list it.
 */
export async function listTapes(actor: Pick<Actor, "id" | "role">, { includeRetired = false }: { includeRetired?: boolean } = {}): Promise<(TapeRow & { projectIds: string[] })[]> {
  const db = getDb();
  const scope = await scopeOf(actor, db);
  const [rows, links] = await Promise.all([
    db
      .select()
      .from(tapes)
      .where(and(includeRetired ? undefined : isNull(tapes.retiredAt), tapeListedInScope(scope, tapes.id)))
      .orderBy(asc(tapes.label)),
    db.select({ projectId: projectTapes.projectId, id: projectTapes.tapeId }).from(projectTapes).where(projectColInScope(scope, projectTapes.projectId)),
  ]);
  const byId = new Map<string, string[]>();
  for (const l of links) byId.set(l.id, [...(byId.get(l.id) ?? []), l.projectId]);
  return rows.map((r) => ({ ...r, projectIds: (byId.get(r.id) ?? []).sort() }));
}

/** One tape as the actor may see it, with the projects (of theirs) that list it; null answers like "no such tape". */
export async function getTapeFor(actor: Pick<Actor, "id" | "role">, id: string): Promise<(TapeRow & { projects: { id: string; name: string }[] }) | null> {
  const db = getDb();
  const scope = await scopeOf(actor, db);
  const [row] = await db
    .select()
    .from(tapes)
    .where(and(eq(tapes.id, id), tapeListedInScope(scope, tapes.id)))
    .limit(1);
  if (!row) return null;
  const ps = await db
    .select({ id: projects.id, name: projects.name })
    .from(projectTapes)
    .innerJoin(projects, eq(projects.id, projectTapes.projectId))
    .where(and(eq(projectTapes.tapeId, id), projectColInScope(scope, projectTapes.projectId)))
    .orderBy(asc(projects.name));
  return { ...row, projects: ps };
}

export async function getTape(id: string): Promise<TapeRow | null> {
  const [row] = await getDb().select().from(tapes).where(eq(tapes.id, id)).limit(1);
  return row ?? null;
}

/** The ranging core's view of a tape (retired tapes too: old shots still use them). */
export async function getTapeSpec(id: string): Promise<TapeSpec | null> {
  const r = await getTape(id);
  if (!r) return null;
  return {
    standardTempC: r.standardTempC,
    standardTensionN: r.standardTensionN,
    areaMm2: r.areaMm2,
    modulusGPa: r.modulusGPa,
    weightNPerM: r.weightNPerM,
    calibrationPpm: r.calibrationPpm,
  };
}

export const BACKFILL_PROJECT_TAPES_ACTION = "backfill.project-tapes-edms";

/**
 * issue 14: before project_tapes / project_edms existed every user with a project got every tape
 * and EDM. Once, at migrate time, each tape and reference EDM is linked to every project whose
 * sessions already used it, so no crew loses a tape it works with. Marked in the audit trail
 * (like the reference-uncertainty backfill) so an admin's later removals are never undone.
 */
export async function backfillProjectTapesEdms(db: Db = getDb()): Promise<{ ran: boolean; tapes: number; edms: number }> {
  const mark = await db.select({ id: auditLog.id }).from(auditLog).where(eq(auditLog.action, BACKFILL_PROJECT_TAPES_ACTION)).limit(1);
  if (mark.length) return { ran: false, tapes: 0, edms: 0 };
  // the same expressions as the shots_sensor_uses index (raw ->> '$.reference…')
  const t = await db.run(sql`INSERT OR IGNORE INTO ${projectTapes} (project_id, tape_id)
    SELECT DISTINCT cs.project_id, s.raw ->> '$.reference.tape.tapeId' FROM ${shots} s JOIN ${checkSessions} cs ON cs.id = s.session_id
    WHERE cs.project_id IS NOT NULL AND (s.raw ->> '$.reference.tape.tapeId') IN (SELECT id FROM ${tapes})`);
  const e = await db.run(sql`INSERT OR IGNORE INTO ${projectEdms} (project_id, edm_id)
    SELECT DISTINCT cs.project_id, s.raw ->> '$.reference.edmId' FROM ${shots} s JOIN ${checkSessions} cs ON cs.id = s.session_id
    WHERE cs.project_id IS NOT NULL AND (s.raw ->> '$.reference.edmId') IN (SELECT id FROM ${edms})`);
  const out = { tapes: t.rowsAffected, edms: e.rowsAffected };
  await db.insert(auditLog).values({ actorUserId: null, action: BACKFILL_PROJECT_TAPES_ACTION, entity: "projects", entityId: null, detail: out });
  return { ran: true, ...out };
}

/**
 * GET /api/tapes (issue 14): the live tapes of the actor's projects (admins: all), each with
 * `projectIds` (those of the actor's projects that list it); `?project=` narrows to one project,
 * and a project the actor cannot see answers 404 like an unknown one.
 */
export async function tapesJson(actor: Pick<Actor, "id" | "role">, params: URLSearchParams): Promise<{ status: 200 | 404; body: unknown }> {
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
  const rows = (await listTapes(actor)).filter((r) => !project || r.projectIds.includes(project));
  return { status: 200, body: { tapes: rows.map(({ createdAt: _c, updatedAt: _u, retiredAt: _r, ...r }) => r) } };
}
