// Recomputation of the stored computed columns after a registry change (sensor spec, project
// rule, tape constants, site survey, EDM uncertainty), and the one-time u_ref backfill (issue 13:
// split out of shots.server.ts).
import { eq, isNull, sql, type SQL } from "drizzle-orm";
import { getDb, type Db } from "~/db/client.server";
import { auditLog, checkSessions, shots } from "~/db/schema";
import { validateShot } from "~/contract";
import { loadRegistryContext, type SessionFacts } from "./registry-context.server";
import { computeShotRecord, type ShotOutcome } from "./shot-record";

// ---------------------------------------------------------------------------------------------
// Recomputation after a registry change (sensor spec, project rule, tape constants, site survey).

/**
 * The audit action of a recomputation, one row per sensor whose shots it updated, written in
 * the same transaction as the updates: the report cache (reports.server) reads these marks to
 * know the stored figures changed. Every writer of the computed columns goes through here.
 */
export const RECOMPUTE_ACTION = "shots.recompute";

const UPDATE_SQL =
  "UPDATE shots SET reference_m = ?, range_m = ?, error_mm = ?, tolerance_mm = ?, limit_mm = ?, within = ?, repeatability_mm = ?, " +
  "readings_count = ?, wrap = ?, unambiguous_m = ?, retro = ?, air_defaulted = ?, reference_uncertainty_mm = ?, computed_at = ? WHERE id = ?";

async function recomputeWhere(where: SQL, db: Db = getDb()): Promise<number> {
  const rows = await db
    .select({
      id: shots.id,
      raw: shots.raw,
      shotSensorId: shots.sensorId,
      sessionId: checkSessions.id,
      sensorId: checkSessions.sensorId,
      siteId: checkSessions.siteId,
      projectId: checkSessions.projectId,
      airTempC: checkSessions.airTempC,
      pressureHpa: checkSessions.pressureHpa,
      humidityPct: checkSessions.humidityPct,
    })
    .from(shots)
    .innerJoin(checkSessions, eq(checkSessions.id, shots.sessionId))
    .where(where);
  if (!rows.length) return 0;
  const parsed = rows.map((r) => {
    const v = validateShot(JSON.parse(r.raw));
    return { row: r, shot: v.ok ? v.value : null };
  });
  const ctx = await loadRegistryContext(
    {
      sensorIds: rows.map((r) => r.sensorId),
      siteIds: rows.map((r) => r.siteId),
      tapeIds: parsed.flatMap((p) => (p.shot?.reference.method === "tape" ? [p.shot.reference.tape.tapeId] : [])),
      projectIds: rows.flatMap((r) => (r.projectId ? [r.projectId] : [])),
    },
    db,
  );
  const now = new Date().toISOString();
  const stmts: { sql: string; args: (number | string | null)[] }[] = [];
  const perSensor = new Map<string, number>();
  let failed = 0;
  for (const { row, shot } of parsed) {
    if (!shot) {
      failed++;
      continue;
    }
    const session: SessionFacts = {
      id: row.sessionId,
      sensorId: row.sensorId,
      siteId: row.siteId,
      projectId: row.projectId,
      air: { airTempC: row.airTempC, pressureHpa: row.pressureHpa, humidityPct: row.humidityPct },
    };
    let out: ShotOutcome;
    try {
      out = computeShotRecord(shot, session, ctx);
    } catch (e) {
      // one shot's unexpected failure never stops the others' recomputation
      console.error(`recompute: shot ${row.id} could not be recomputed`, e);
      failed++;
      continue;
    }
    if (!out.ok) {
      // Keep the last good figures: the registry edit made this shot uncomputable.
      failed++;
      continue;
    }
    const c = out.columns;
    perSensor.set(row.shotSensorId, (perSensor.get(row.shotSensorId) ?? 0) + 1);
    stmts.push({
      sql: UPDATE_SQL,
      args: [
        c.referenceM,
        c.rangeM,
        c.errorMm,
        c.toleranceMm,
        c.limitMm,
        c.within ? 1 : 0,
        c.repeatabilityMm,
        c.readingsCount,
        c.wrap ? 1 : 0,
        c.unambiguousM,
        c.retro ? 1 : 0,
        c.airDefaulted ? 1 : 0,
        c.referenceUncertaintyMm,
        now,
        row.id,
      ],
    });
  }
  if (failed) console.warn(`recompute: ${failed} of ${rows.length} shots could not be recomputed and keep their previous figures`);
  if (!stmts.length) return 0;
  const updated = stmts.length;
  for (const [sensorId, n] of perSensor) {
    const q = db
      .insert(auditLog)
      .values({ actorUserId: null, action: RECOMPUTE_ACTION, entity: "sensor", entityId: sensorId, detail: { shots: n } })
      .toSQL();
    stmts.push({ sql: q.sql, args: q.params as (number | string | null)[] });
  }
  // One batch = one write transaction, run synchronously by the local client.
  await db.$client.batch(stmts, "write");
  return updated;
}

/** Recomputes every shot of the sensor from its raw record; returns how many were updated. */
export function recomputeShotsForSensor(sensorId: string): Promise<number> {
  return recomputeWhere(eq(shots.sensorId, sensorId));
}

/** After a project's rule changed: the stored per-shot limit depends on its coverage factor. */
export function recomputeShotsForProject(projectId: string): Promise<number> {
  return recomputeWhere(eq(checkSessions.projectId, projectId));
}

/** After a site's stations or targets were resurveyed. */
export function recomputeShotsForSite(siteId: string): Promise<number> {
  return recomputeWhere(eq(checkSessions.siteId, siteId));
}

/** After a reference EDM's uncertainty changed (issue 15). */
export function recomputeShotsForEdm(edmId: string): Promise<number> {
  return recomputeWhere(sql`json_extract(${shots.raw}, '$.reference.edmId') = ${edmId}`);
}

/** After a tape's constants changed. */
export function recomputeShotsForTape(tapeId: string): Promise<number> {
  return recomputeWhere(sql`json_extract(${shots.raw}, '$.reference.tape.tapeId') = ${tapeId}`);
}

/** The audit mark of the one-time backfill of u_ref (issue 15). */
export const BACKFILL_REFERENCE_UNCERTAINTY_ACTION = "shots.backfill_reference_uncertainty";

/**
 * Shots stored before migration 0002 have no reference uncertainty (the column came in empty),
 * which the report would count as "unknown" until something recomputed them. Run after the
 * migrations: recomputes, once, every shot whose u_ref is empty, then leaves a mark in the audit
 * log so later starts skip it. Idempotent: recomputation from the raw record gives the same
 * figures, and shots whose u_ref is truly unknown simply stay null.
 */
export async function backfillReferenceUncertainty(db: Db = getDb()): Promise<{ ran: boolean; updated: number }> {
  const mark = await db.select({ id: auditLog.id }).from(auditLog).where(eq(auditLog.action, BACKFILL_REFERENCE_UNCERTAINTY_ACTION)).limit(1);
  if (mark.length) return { ran: false, updated: 0 };
  const updated = await recomputeWhere(isNull(shots.referenceUncertaintyMm), db);
  await db.insert(auditLog).values({ actorUserId: null, action: BACKFILL_REFERENCE_UNCERTAINTY_ACTION, entity: "shots", entityId: null, detail: { shots: updated } });
  return { ran: true, updated };
}
