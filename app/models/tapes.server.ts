// Steel tapes used to set reference distances: their standard conditions and certificate
// correction feed the tape corrections of ranging.md §3. Never deleted, only retired.
import { asc, eq, isNull } from "drizzle-orm";
import type { TapeSpec } from "~/domain";
import { getDb } from "~/db/client.server";
import { tapes } from "~/db/schema";
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

export async function listTapes({ includeRetired = false }: { includeRetired?: boolean } = {}): Promise<TapeRow[]> {
  return getDb()
    .select()
    .from(tapes)
    .where(includeRetired ? undefined : isNull(tapes.retiredAt))
    .orderBy(asc(tapes.label));
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
