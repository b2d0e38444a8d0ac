// Steel tapes used to set reference distances: their standard conditions and certificate
// correction feed the tape corrections of ranging.md §3. Never deleted, only retired.
import { eq, sql } from "drizzle-orm";
import type { TapeSpec } from "~/domain";
import { getDb, type Db } from "~/db/client.server";
import { auditLog, checkSessions, edms, projectEdms, projectTapes, shots, tapes } from "~/db/schema";
import type { Actor } from "~/models/actor";
import { tapeListedInScope } from "~/models/scope.server";
import { audit } from "~/models/audit.server";
import { certificateColumns, stableStringify, tapeSchema, type NotFound, type RegistryResult, type TapeBody } from "~/contract/registry";
import {
  actorId,
  changedFields,
  createRegistryRecord,
  getProjectListedFor,
  listProjectListed,
  nowIso,
  parseRegistryBody,
  projectListedJson,
  restoreRecord,
  retireRecord,
  type CreateRule,
  type ProjectListed,
  type RegistryActor,
  type Retirable,
} from "~/models/registry-upsert.server";
import { recomputeShotsForTape } from "~/models/recompute.server";

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

const parseTape = (body: unknown) => parseRegistryBody(tapeSchema, body);

const TAPE_CREATE: CreateRule<TapeBody, TapeRow> = {
  noun: "tape",
  parse: parseTape,
  byId: getTape,
  twins: (b) => getDb().select().from(tapes).where(eq(tapes.label, b.label)),
  same: sameContent,
  answer: (r) => ({ id: r.id }),
  async insert(actor, id, b) {
    const values = { id, ...contentOf(b, true) };
    await getDb().transaction(async (tx) => {
      await tx.insert(tapes).values(values);
      await audit(actorId(actor), "create", "tape", id, values, tx);
    });
    return { status: 201, body: { id } };
  },
};

export async function createTape(actor: RegistryActor, body: unknown): Promise<RegistryResult> {
  return createRegistryRecord(TAPE_CREATE, actor, body);
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

const TAPE_RETIRE: Retirable = {
  entity: "tape",
  noun: "tape",
  retiredAt: getTape,
  setRetired: (tx, id, retiredAt, at) => tx.update(tapes).set({ retiredAt, updatedAt: at }).where(eq(tapes.id, id)),
};

export const retireTape = (actor: RegistryActor, id: string, reason = "") => retireRecord(TAPE_RETIRE, actor, id, reason);
export const restoreTape = (actor: RegistryActor, id: string) => restoreRecord(TAPE_RETIRE, actor, id);

const TAPES_LISTED: ProjectListed = {
  table: tapes,
  id: tapes.id,
  label: tapes.label,
  retiredAt: tapes.retiredAt,
  listedInScope: tapeListedInScope,
  link: projectTapes,
  linkProjectId: projectTapes.projectId,
  linkId: projectTapes.tapeId,
};

/** issue 14: every tape for an admin; anyone else those their projects list, each with `projectIds`. */
export async function listTapes(actor: Pick<Actor, "id" | "role">, { includeRetired = false }: { includeRetired?: boolean } = {}): Promise<(TapeRow & { projectIds: string[] })[]> {
  return listProjectListed<TapeRow>(TAPES_LISTED, actor, includeRetired);
}

/** One tape as the actor may see it, with the projects (of theirs) that list it; null answers like "no such tape". */
export async function getTapeFor(actor: Pick<Actor, "id" | "role">, id: string): Promise<(TapeRow & { projects: { id: string; name: string }[] }) | null> {
  return getProjectListedFor<TapeRow>(TAPES_LISTED, actor, id);
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

/** GET /api/tapes (issue 14): the live tapes of the actor's projects (admins: all); `?project=` narrows. */
export async function tapesJson(actor: Pick<Actor, "id" | "role">, params: URLSearchParams): Promise<{ status: 200 | 404; body: unknown }> {
  return projectListedJson<TapeRow>(TAPES_LISTED, "tapes", actor, params);
}
