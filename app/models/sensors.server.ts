// Sensors: the registry's profile of each range sensor (kind, wavelength, modulation, air
// handling, tolerance ±(a mm + b ppm)). Never deleted: retiring keeps every shot's history.
import { and, asc, desc, eq, inArray, isNull, sql } from "drizzle-orm";
import type { SensorSpec } from "~/domain";
import { getDb } from "~/db/client.server";
import { auditLog, checkSessions, sensors, users } from "~/db/schema";
import { audit } from "~/models/audit.server";
import type { Actor } from "~/models/actor";
import { scopeOf, sensorIdInScope } from "~/models/scope.server";
import { recomputeShotsForSensor } from "~/models/recompute.server";
import { certificateColumns, sensorSchema, stableStringify, type NotFound, type RegistryResult, type SensorBody } from "~/contract/registry";
import {
  actorId,
  changedFields,
  createRegistryRecord,
  nowIso,
  parseRegistryBody,
  restoreRecord,
  retireRecord,
  type CreateRule,
  type RegistryActor,
  type Retirable,
} from "~/models/registry-upsert.server";

// ---------- sensors ----------
export type SensorRow = typeof sensors.$inferSelect;

const SPEC_FIELDS = ["kind", "wavelengthNm", "modulationHz", "appliesAirCorrection", "assumedRefractivity", "toleranceMm", "tolerancePpm", "outdoor"] as const;

function contentOf(b: SensorBody, withNotes: boolean) {
  return {
    label: b.label,
    serial: b.serial,
    kind: b.kind,
    wavelengthNm: b.wavelengthNm,
    modulationHz: b.modulationHz,
    appliesAirCorrection: b.appliesAirCorrection,
    assumedRefractivity: b.assumedRefractivity,
    toleranceMm: b.toleranceMm,
    tolerancePpm: b.tolerancePpm,
    outdoor: b.outdoor,
    calibrationDue: b.calibrationDue ?? null,
    laserClass: b.laserClass ?? null,
    ...certificateColumns(b.certificate),
    ...(withNotes ? { notes: b.notes ?? "" } : {}),
    intrinsics: b.intrinsics ?? null,
    depthScaleMm: b.depthScaleMm ?? null,
  };
}

function rowContent(r: SensorRow, withNotes: boolean) {
  return {
    label: r.label,
    serial: r.serial,
    kind: r.kind,
    wavelengthNm: r.wavelengthNm,
    modulationHz: r.modulationHz,
    appliesAirCorrection: r.appliesAirCorrection,
    assumedRefractivity: r.assumedRefractivity,
    toleranceMm: r.toleranceMm,
    tolerancePpm: r.tolerancePpm,
    outdoor: r.outdoor,
    calibrationDue: r.calibrationDue ?? null,
    laserClass: r.laserClass ?? null,
    certNumber: r.certNumber ?? null,
    certLaboratory: r.certLaboratory ?? null,
    certIssued: r.certIssued ?? null,
    certDue: r.certDue ?? null,
    ...(withNotes ? { notes: r.notes } : {}),
    intrinsics: r.intrinsics ?? null,
    depthScaleMm: r.depthScaleMm ?? null,
  };
}

function sameContent(r: SensorRow, b: SensorBody) {
  const withNotes = b.notes !== undefined;
  return stableStringify(rowContent(r, withNotes)) === stableStringify(contentOf(b, withNotes));
}

const parseSensor = (body: unknown) => parseRegistryBody(sensorSchema, body);

const SENSOR_CREATE: CreateRule<SensorBody, SensorRow> = {
  noun: "sensor",
  parse: parseSensor,
  byId: getSensor,
  twins: (b) =>
    getDb()
      .select()
      .from(sensors)
      .where(and(eq(sensors.serial, b.serial), eq(sensors.label, b.label))),
  same: sameContent,
  answer: (r) => ({ id: r.id }),
  async insert(actor, id, b) {
    const values = { id, ...contentOf(b, true) };
    await getDb().transaction(async (tx) => {
      await tx.insert(sensors).values(values);
      await audit(actorId(actor), "create", "sensor", id, values, tx);
    });
    return { status: 201, body: { id } };
  },
};

/** POST /api/sensors, the admin form and the seed: 201 new, 200 same body again, 400, 409. */
export async function createSensor(actor: RegistryActor, body: unknown): Promise<RegistryResult> {
  return createRegistryRecord(SENSOR_CREATE, actor, body);
}

/** The admin form's edit: the whole profile again. A spec change recomputes the sensor's shots. */
export async function updateSensor(actor: RegistryActor, id: string, body: unknown): Promise<RegistryResult | NotFound> {
  const p = parseSensor(body);
  if (!p.ok) return p.result;
  const before = await getSensor(id);
  if (!before) return { status: 404, body: { error: `No sensor with id "${id}".` } };
  const after = contentOf(p.value, true);
  const changes = changedFields(rowContent(before, true), after);
  if (Object.keys(changes).length === 0) return { status: 200, body: { id, changed: [] } };
  await getDb().transaction(async (tx) => {
    await tx
      .update(sensors)
      .set({ ...after, updatedAt: nowIso() })
      .where(eq(sensors.id, id));
    await audit(actorId(actor), "update", "sensor", id, changes, tx);
  });
  // The stored per-shot figures depend on the spec: recompute them from the raw records.
  const recomputed = SPEC_FIELDS.some((f) => f in changes) ? await recomputeShotsForSensor(id) : 0;
  return { status: 200, body: { id, changed: Object.keys(changes), recomputed } };
}

const SENSOR_RETIRE: Retirable = {
  entity: "sensor",
  noun: "sensor",
  retiredAt: getSensor,
  setRetired: (tx, id, retiredAt, at) => tx.update(sensors).set({ retiredAt, updatedAt: at }).where(eq(sensors.id, id)),
};

export const retireSensor = (actor: RegistryActor, id: string, reason = "") => retireRecord(SENSOR_RETIRE, actor, id, reason);
export const restoreSensor = (actor: RegistryActor, id: string) => restoreRecord(SENSOR_RETIRE, actor, id);

/** The registry's sensors the actor may see (issue 14: those of their projects; admins all). */
export async function listSensors(actor: Actor, { includeRetired = false }: { includeRetired?: boolean } = {}): Promise<SensorRow[]> {
  const scope = await scopeOf(actor);
  return getDb()
    .select()
    .from(sensors)
    .where(and(includeRetired ? undefined : isNull(sensors.retiredAt), sensorIdInScope(scope, sensors.id)))
    .orderBy(asc(sensors.label), asc(sensors.serial));
}

export async function getSensor(id: string): Promise<SensorRow | null> {
  const [row] = await getDb().select().from(sensors).where(eq(sensors.id, id)).limit(1);
  return row ?? null;
}

export function sensorSpecOf(r: SensorRow): SensorSpec {
  return {
    id: r.id,
    kind: r.kind,
    wavelengthNm: r.wavelengthNm,
    modulationHz: r.modulationHz ?? [],
    appliesAirCorrection: r.appliesAirCorrection,
    assumedRefractivity: r.assumedRefractivity,
    toleranceMm: r.toleranceMm,
    tolerancePpm: r.tolerancePpm,
    outdoor: r.outdoor,
  };
}

/** The ranging core's view of a sensor (retired sensors too: their shots are still judged). */
export async function getSensorSpec(id: string): Promise<SensorSpec | null> {
  const row = await getSensor(id);
  return row ? sensorSpecOf(row) : null;
}

export async function sensorsExist(ids: string[]): Promise<Set<string>> {
  if (ids.length === 0) return new Set();
  const rows = await getDb().select({ id: sensors.id }).from(sensors).where(inArray(sensors.id, ids));
  return new Set(rows.map((r) => r.id));
}

/** How many check sessions (and so shots) refer to a sensor: shown before retiring. */
export async function sensorUsage(id: string): Promise<{ sessions: number }> {
  const [row] = await getDb()
    .select({ n: sql<number>`count(*)` })
    .from(checkSessions)
    .where(eq(checkSessions.sensorId, id));
  return { sessions: Number(row?.n ?? 0) };
}

/** The audit rows of one registry record, newest first, with who made each change. */
export async function registryHistory(entity: "sensor" | "tape" | "site" | "project" | "edm", id: string, limit = 50) {
  const rows = await getDb()
    .select({ at: auditLog.at, action: auditLog.action, detail: auditLog.detail, actorName: users.name, actorEmail: users.email })
    .from(auditLog)
    .leftJoin(users, eq(users.id, auditLog.actorUserId))
    .where(and(eq(auditLog.entity, entity), eq(auditLog.entityId, id)))
    .orderBy(desc(auditLog.at))
    .limit(limit);
  return rows.map((r) => ({
    at: r.at,
    action: r.action,
    by: r.actorName || r.actorEmail || "system",
    fields:
      r.action === "update" && r.detail && typeof r.detail === "object"
        ? summariseChange(r.detail as Record<string, unknown>)
        : r.action.startsWith("member.") && r.detail && typeof r.detail === "object" && "email" in r.detail
          ? [String((r.detail as { email: unknown }).email)] // issue 14: who joined or left the project
          : [],
    reason: r.detail && typeof r.detail === "object" && "reason" in r.detail ? String((r.detail as { reason: unknown }).reason ?? "") : "",
  }));
}

function summariseChange(detail: Record<string, unknown>): string[] {
  // Sites log { site, targets: {added, changed, retired, restored}, stations: {…} }; others log field → {from, to}.
  if ("targets" in detail && "stations" in detail && "site" in detail) {
    const out = Object.keys((detail.site as object) ?? {});
    for (const list of ["targets", "stations"] as const) {
      const d = detail[list] as Record<string, string[]> | undefined;
      for (const [what, labels] of Object.entries(d ?? {})) if (labels.length) out.push(`${list} ${what}: ${labels.join(", ")}`);
    }
    return out;
  }
  return Object.keys(detail);
}
