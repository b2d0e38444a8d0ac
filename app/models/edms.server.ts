// Reference EDMs (issue 15, ranging.md §7): the instruments that measure EDM reference
// distances, with their standard uncertainty a + b·D and calibration certificate. A shot that
// names one (`reference.edmId`) takes its u_ref from here; a certificate past due on a
// session's date is flagged on the report's traceability. Never deleted, only retired.
import { eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { edms, projectEdms } from "~/db/schema";
import type { Actor } from "~/models/actor";
import { edmListedInScope } from "~/models/scope.server";
import { audit } from "~/models/audit.server";
import { certificateColumns, edmSchema, stableStringify, type EdmBody, type NotFound, type RegistryResult } from "~/contract/registry";
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
import { recomputeShotsForEdm } from "~/models/recompute.server";

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

const parseEdm = (body: unknown) => parseRegistryBody(edmSchema, body);

const EDM_CREATE: CreateRule<EdmBody, EdmRow> = {
  noun: "reference EDM",
  parse: parseEdm,
  byId: getEdm,
  twins: (b) => getDb().select().from(edms).where(eq(edms.serial, b.serial)),
  same: sameContent,
  answer: (r) => ({ id: r.id }),
  async insert(actor, id, b) {
    const values = { id, ...contentOf(b, true) };
    await getDb().transaction(async (tx) => {
      await tx.insert(edms).values(values);
      await audit(actorId(actor), "create", "edm", id, values, tx);
    });
    return { status: 201, body: { id } };
  },
};

/** POST /api/edms, the admin form and the seed: 201 new, 200 same body again, 400, 409. */
export async function createEdm(actor: RegistryActor, body: unknown): Promise<RegistryResult> {
  return createRegistryRecord(EDM_CREATE, actor, body);
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

const EDM_RETIRE: Retirable = {
  entity: "edm",
  noun: "reference EDM",
  retiredAt: getEdm,
  setRetired: (tx, id, retiredAt, at) => tx.update(edms).set({ retiredAt, updatedAt: at }).where(eq(edms.id, id)),
};

export const retireEdm = (actor: RegistryActor, id: string, reason = "") => retireRecord(EDM_RETIRE, actor, id, reason);
export const restoreEdm = (actor: RegistryActor, id: string) => restoreRecord(EDM_RETIRE, actor, id);

const EDMS_LISTED: ProjectListed = {
  table: edms,
  id: edms.id,
  label: edms.label,
  retiredAt: edms.retiredAt,
  listedInScope: edmListedInScope,
  link: projectEdms,
  linkProjectId: projectEdms.projectId,
  linkId: projectEdms.edmId,
};

/** issue 14: every EDM for an admin; anyone else those their projects list, each with `projectIds`. */
export async function listEdms(actor: Pick<Actor, "id" | "role">, { includeRetired = false }: { includeRetired?: boolean } = {}): Promise<(EdmRow & { projectIds: string[] })[]> {
  return listProjectListed<EdmRow>(EDMS_LISTED, actor, includeRetired);
}

/** One EDM as the actor may see it, with the projects (of theirs) that list it; null answers like "no such EDM". */
export async function getEdmFor(actor: Pick<Actor, "id" | "role">, id: string): Promise<(EdmRow & { projects: { id: string; name: string }[] }) | null> {
  return getProjectListedFor<EdmRow>(EDMS_LISTED, actor, id);
}

export async function getEdm(id: string): Promise<EdmRow | null> {
  const [row] = await getDb().select().from(edms).where(eq(edms.id, id)).limit(1);
  return row ?? null;
}

/** GET /api/edms (issue 14): the live reference EDMs of the actor's projects (admins: all); `?project=` narrows. */
export async function edmsJson(actor: Pick<Actor, "id" | "role">, params: URLSearchParams): Promise<{ status: 200 | 404; body: unknown }> {
  return projectListedJson<EdmRow>(EDMS_LISTED, "edms", actor, params);
}
