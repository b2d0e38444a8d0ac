// CSV import of a sensor's own export: the column mapping is remembered per sensor
// (import_mappings); rows are mapped again here (the browser's preview is never trusted) and
// the valid ones go through the same ingest as a tablet's sync.
import { and, asc, eq, isNull } from "drizzle-orm";
import { z } from "zod";
import { getDb } from "~/db/client.server";
import { importMappings, projects, sensors, sites, targets } from "~/db/schema";
import { audit } from "~/models/audit.server";
import { ingestSync } from "~/models/sync.server";
import { notifyFailedVerdicts } from "~/models/signoffs.server";
import { sensorSpecOf } from "~/models/sensors.server";
import { IMPORT_FIELDS, mapRow, type ImportMapping, type ImportTarget, type RowError } from "~/contract/import-rows";

import type { Actor } from "~/models/actor";
import { canSeeSensor, canSeeSite, projectColInScope, scopeOf, sensorListedInScope, siteListedInScope } from "~/models/scope.server";

/** At most this many rows a request (the sync limit is 500 shots). */
export const IMPORT_CHUNK_MAX = 500;

/** What the import screen offers: issue 14 — only the sensors, sites and projects of the actor's projects. */
export async function importContext(actor: Actor) {
  const db = getDb();
  const scope = await scopeOf(actor, db);
  const [sensorRows, siteRows, targetRows, mappingRows, projectRows] = await Promise.all([
    db
      .select()
      .from(sensors)
      .where(and(isNull(sensors.retiredAt), sensorListedInScope(scope, sensors.id)))
      .orderBy(asc(sensors.label)),
    db
      .select({ id: sites.id, name: sites.name })
      .from(sites)
      .where(and(isNull(sites.retiredAt), siteListedInScope(scope, sites.id)))
      .orderBy(asc(sites.name)),
    db
      .select({ id: targets.id, siteId: targets.siteId, label: targets.label, reflectancePct: targets.reflectancePct, referenceM: targets.referenceM })
      .from(targets)
      .where(and(isNull(targets.retiredAt), siteListedInScope(scope, targets.siteId)))
      .orderBy(asc(targets.label)),
    db
      .select({ sensorId: importMappings.sensorId, mapping: importMappings.mapping, updatedAt: importMappings.updatedAt })
      .from(importMappings)
      .where(sensorListedInScope(scope, importMappings.sensorId)),
    db
      .select({ id: projects.id, name: projects.name })
      .from(projects)
      .where(and(isNull(projects.retiredAt), projectColInScope(scope, projects.id)))
      .orderBy(asc(projects.name)),
  ]);
  return {
    sensors: sensorRows.map((s) => ({ id: s.id, label: s.label, serial: s.serial, spec: sensorSpecOf(s) })),
    sites: siteRows.map((s) => ({ ...s, targets: targetRows.filter((t) => t.siteId === s.id) })),
    mappings: Object.fromEntries(mappingRows.map((m) => [m.sensorId, m.mapping as ImportMapping])),
    projects: projectRows,
  };
}

const FIELD_KEYS = IMPORT_FIELDS.map((f) => f.key) as [string, ...string[]];

export const mappingSchema = z
  .object({
    ...Object.fromEntries(FIELD_KEYS.map((k) => [k, z.string().trim().max(200).optional()])),
    _rangeUnit: z.enum(["m", "mm"]).optional(),
    _distanceUnit: z.enum(["m", "mm"]).optional(),
    _timeOffset: z
      .string()
      .regex(/^[+-]\d{2}:\d{2}$/, "Use an offset like +02:00.")
      .optional(),
  })
  .superRefine((m, ctx) => {
    const mm = m as Record<string, string | undefined>;
    if (!mm.takenAt) ctx.addIssue({ code: "custom", path: ["takenAt"], message: "Choose the column with the time of each shot." });
    if (!mm.rangeM) ctx.addIssue({ code: "custom", path: ["rangeM"], message: "Choose the column with the sensor's range." });
    if (!mm.distanceM && !mm.target) ctx.addIssue({ code: "custom", path: ["distanceM"], message: "Choose a reference-distance column or a target column (targets with surveyed distances)." });
  });

const chunkSchema = z.object({
  sensorId: z.string().min(1, "Choose the sensor."),
  siteId: z.string().min(1, "Choose the site."),
  projectId: z.string().optional(),
  deviceId: z.string().min(1).max(200).default("csv-import"),
  session: z.object({
    id: z.uuid("session id must be a UUID"),
    startedAt: z.string().min(1),
    airTempC: z.number().nullish(),
    pressureHpa: z.number().nullish(),
    humidityPct: z.number().nullish(),
    note: z.string().max(2000).nullish(),
  }),
  mapping: mappingSchema,
  rows: z
    .array(z.object({ row: z.number().int().min(1), id: z.uuid("row id must be a UUID"), values: z.record(z.string(), z.string().optional()) }))
    .min(1, "No rows to import.")
    .max(IMPORT_CHUNK_MAX, `At most ${IMPORT_CHUNK_MAX} rows a request.`),
});

export type RowResult = { row: number; id: string; status: "accepted" | "duplicate" | "rejected"; errors: RowError[] };
export type ChunkAnswer = { status: 200; body: { session: { status: string; errors: RowError[] }; rows: RowResult[] } } | { status: 400 | 404; body: { error: string; errors?: RowError[] } };

export async function saveMapping(actor: Actor, sensorId: string, mapping: ImportMapping) {
  const db = getDb();
  const clean = Object.fromEntries(Object.entries(mapping).filter(([, v]) => typeof v === "string" && v !== "")) as Record<string, string>;
  const now = new Date().toISOString();
  const [before] = await db.select({ mapping: importMappings.mapping }).from(importMappings).where(eq(importMappings.sensorId, sensorId));
  if (before && JSON.stringify(before.mapping) === JSON.stringify(clean)) return;
  await db
    .insert(importMappings)
    .values({ sensorId, mapping: clean, updatedAt: now, updatedBy: actor.id })
    .onConflictDoUpdate({ target: importMappings.sensorId, set: { mapping: clean, updatedAt: now, updatedBy: actor.id } });
  await audit(actor.id, "import-mapping.save", "sensor", sensorId, { mapping: clean });
}

/**
 * One chunk of an import: remembers the mapping, maps every row again, sends the valid rows
 * with the import's session through ingestSync, and answers per row (by CSV row number).
 */
export async function importChunk(actor: Actor, body: unknown): Promise<ChunkAnswer> {
  const parsed = chunkSchema.safeParse(body);
  if (!parsed.success) {
    return { status: 400, body: { error: "The import request is not valid.", errors: parsed.error.issues.map((i) => ({ field: i.path.join("."), message: i.message })) } };
  }
  const c = parsed.data;
  const db = getDb();
  // issue 14: only into the actor's sensors and sites (others answer as unknown); the
  // session's project is checked by the ingest like a tablet's
  const scope = await scopeOf(actor, db);
  if (!(await canSeeSensor(scope, c.sensorId, db))) return { status: 404, body: { error: `No sensor ${c.sensorId}.` } };
  if (!(await canSeeSite(scope, c.siteId, db))) return { status: 404, body: { error: `No site ${c.siteId}.` } };
  const siteTargets: ImportTarget[] = await db
    .select({ id: targets.id, label: targets.label, reflectancePct: targets.reflectancePct, referenceM: targets.referenceM })
    .from(targets)
    .where(and(eq(targets.siteId, c.siteId), isNull(targets.retiredAt)));

  const mapping = c.mapping as ImportMapping;
  await saveMapping(actor, c.sensorId, mapping);

  const results: RowResult[] = [];
  const toSend: { row: number; id: string; shot: Record<string, unknown> }[] = [];
  for (const r of c.rows) {
    const m = mapRow(r.values, mapping, siteTargets);
    if (m.ok) toSend.push({ row: r.row, id: r.id, shot: { id: r.id, sessionId: c.session.id, ...m.shot } });
    else results.push({ row: r.row, id: r.id, status: "rejected", errors: m.errors });
  }
  const session = {
    id: c.session.id,
    sensorId: c.sensorId,
    siteId: c.siteId,
    ...(c.projectId ? { projectId: c.projectId } : {}),
    startedAt: c.session.startedAt,
    airTempC: c.session.airTempC ?? null,
    pressureHpa: c.session.pressureHpa ?? null,
    humidityPct: c.session.humidityPct ?? null,
    note: c.session.note || null,
  };
  const answer = await ingestSync(actor, { deviceId: c.deviceId, sessions: [session], shots: toSend.map((s) => s.shot) });
  if (answer.status !== 200) {
    const b = answer.body as { error?: string; errors?: { path: string; message: string }[] };
    return { status: 400, body: { error: b.error ?? "The import was refused.", errors: (b.errors ?? []).map((e) => ({ field: e.path, message: e.message })) } };
  }
  const list = (answer.body as { results: { kind: string; id: string; status: RowResult["status"]; errors?: { path: string; message: string }[] }[] }).results;
  const sessionResult = list.find((x) => x.kind === "session" && x.id === c.session.id);
  const byId = new Map(list.filter((x) => x.kind === "shot").map((x) => [x.id, x]));
  for (const s of toSend) {
    const r = byId.get(s.id);
    results.push({
      row: s.row,
      id: s.id,
      status: r?.status ?? "rejected",
      errors: (r?.errors ?? (r ? [] : [{ path: "", message: "no answer from the ingest" }])).map((e) => ({ field: e.path, message: e.message })),
    });
  }
  results.sort((a, b) => a.row - b.row);
  if (results.some((r) => r.status === "accepted")) await notifyFailedVerdicts([c.sensorId]);
  return {
    status: 200,
    body: {
      session: { status: sessionResult?.status ?? "rejected", errors: (sessionResult?.errors ?? []).map((e) => ({ field: e.path, message: e.message })) },
      rows: results,
    },
  };
}
