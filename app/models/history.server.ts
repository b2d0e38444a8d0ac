// issue 15: a sensor's history over months — bias and RMSE per session, sign-offs,
// certificate changes and exclusions — so a QA lead sees a sensor drifting before it fails.
// Figures per session come from the stored computed shots (included shots only).
import { and, asc, desc, eq, inArray, sql } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { auditLog, checkSessions, exclusions, shots, sites, users } from "~/db/schema";
import { biasDrift, pastDueOn, sessionHistoryFigures } from "~/domain";
import { listSignOffs } from "~/models/signoffs.server";
import { sensorReviewHeader } from "~/models/review.server";
import type { Actor } from "~/models/actor";
import { projectColInScope, scopeOf, sessionIdInScope } from "~/models/scope.server";
import { getSensor } from "~/models/sensors.server";

export type HistorySession = {
  sessionId: string;
  startedAt: string;
  siteName: string;
  n: number;
  excluded: number;
  biasMm: number | null;
  rmseMm: number | null;
  /** The sensor's certificate was past due on the session's own date. */
  certificatePastDue: boolean;
};

export async function sensorHistory(actor: Actor, sensorId: string, months = 24) {
  // null (404) outside the reader's projects, as for an unknown sensor (issue 14)
  const head = await sensorReviewHeader(actor, sensorId);
  const row = await getSensor(sensorId);
  if (!head || !row) return null;
  const db = getDb();
  const scope = await scopeOf(actor, db);
  const since = new Date(Date.now() - months * 31 * 86_400_000).toISOString().slice(0, 10);
  const included = sql`CASE WHEN ${shots.excluded} THEN 0 ELSE 1 END`;
  const perSession = await db
    .select({
      sessionId: checkSessions.id,
      startedAt: checkSessions.startedAt,
      siteName: sites.name,
      n: sql<number>`coalesce(sum(${included}), 0)`,
      excluded: sql<number>`coalesce(sum(${shots.excluded}), 0)`,
      sumErrorMm: sql<number>`coalesce(sum(${included} * ${shots.errorMm}), 0)`,
      sumErrorSqMm2: sql<number>`coalesce(sum(${included} * ${shots.errorMm} * ${shots.errorMm}), 0)`,
    })
    .from(checkSessions)
    .innerJoin(sites, eq(sites.id, checkSessions.siteId))
    .leftJoin(shots, eq(shots.sessionId, checkSessions.id))
    .where(and(eq(checkSessions.sensorId, sensorId), sql`substr(${checkSessions.startedAt}, 1, 10) >= ${since}`, projectColInScope(scope, checkSessions.projectId)))
    .groupBy(checkSessions.id)
    .orderBy(asc(checkSessions.startedAt));
  const sessions: HistorySession[] = perSession.map((s) => ({
    sessionId: s.sessionId,
    startedAt: s.startedAt,
    siteName: s.siteName,
    n: Number(s.n),
    excluded: Number(s.excluded),
    ...sessionHistoryFigures({ n: Number(s.n), sumErrorMm: Number(s.sumErrorMm), sumErrorSqMm2: Number(s.sumErrorSqMm2) }),
    certificatePastDue: pastDueOn(row.certDue, s.startedAt),
  }));
  const [signOffs, certificateChanges, excl] = await Promise.all([
    listSignOffs(actor, sensorId, 100),
    // the certificate as it was edited over time (the audit trail of the registry)
    db
      .select({ at: auditLog.at, action: auditLog.action, detail: auditLog.detail })
      .from(auditLog)
      .where(and(eq(auditLog.entity, "sensor"), eq(auditLog.entityId, sensorId), inArray(auditLog.action, ["create", "update"])))
      .orderBy(desc(auditLog.at))
      .limit(200),
    db
      .select({
        shotId: exclusions.shotId,
        reason: exclusions.reason,
        createdAt: exclusions.createdAt,
        restoredAt: exclusions.restoredAt,
        byName: users.name,
        byEmail: users.email,
        takenAt: shots.takenAt,
        errorMm: shots.errorMm,
        referenceM: shots.referenceM,
      })
      .from(exclusions)
      .innerJoin(shots, eq(shots.id, exclusions.shotId))
      .innerJoin(users, eq(users.id, exclusions.byUserId))
      .where(and(eq(shots.sensorId, sensorId), sessionIdInScope(scope, shots.sessionId)))
      .orderBy(desc(exclusions.createdAt))
      .limit(200),
  ]);
  const certEvents = certificateChanges
    .map((c) => {
      const d = (c.detail ?? {}) as Record<string, unknown>;
      const pick = (k: string) => {
        const v = d[k];
        return v && typeof v === "object" && "to" in (v as object) ? ((v as { to: unknown }).to as string | null) : c.action === "create" ? ((v as string | null) ?? null) : undefined;
      };
      const number = pick("certNumber");
      const due = pick("certDue");
      if (number === undefined && due === undefined) return null;
      return { at: c.at, action: c.action, number: number ?? null, due: due ?? null };
    })
    .filter((x): x is NonNullable<typeof x> => x != null && (x.number != null || x.due != null));
  return {
    sensor: { ...head.sensor, certNumber: row.certNumber, certLaboratory: row.certLaboratory, certIssued: row.certIssued, certDue: row.certDue },
    months,
    sessions,
    // drift across sessions: bias trend (t test of the slope) and Nelson's test 3 (ranging.md §7 history)
    drift: biasDrift(sessions),
    signOffs,
    certificateEvents: certEvents,
    exclusions: excl.map(({ byEmail, ...x }) => ({ ...x, byName: x.byName || byEmail })),
  };
}
