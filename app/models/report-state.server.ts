// The state a sensor report depends on, read first (issue 16): the sensor, the rule, the last
// sign-off's bias, the certificates and a fingerprint of the shots — a few index seeks. A kept
// report (reports.server.ts) is served while the fingerprint is unchanged.
import { and, desc, eq, exists, inArray, isNull, or, sql } from "drizzle-orm";
import type { InArgs, Transaction } from "@libsql/client";
import type { Db } from "~/db/client.server";
import { auditLog, checkSessions, edms, exclusions, projects, projectSensors, sensors, shots, signOffs, tapes } from "~/db/schema";
import { DEFAULT_RULE, type Rule } from "~/domain";
import type { ProjectFilter } from "./report-selection.server";
import { RECOMPUTE_ACTION } from "./recompute.server";
import { RULE_COLUMNS, ruleOf } from "./registry-context.server";
import type { QueryError } from "./shot-query.server";

/**
 * What the sensor's shots looked like when read: any insert, exclusion, restore or
 * recomputation changes it. Every part is a b-tree seek, not a scan of the sensor's shots:
 * - the largest rowid of the whole shots table: an insert anywhere moves it (shots are never
 *   deleted but with their sensor, whose created_at is part of the fingerprint too);
 * - the count of the sensor's exclusion rows and of the restored ones (exclusion rows are
 *   never deleted; a restore fills restored_at), walked from the exclusions, which are few;
 * - the marks every recomputation writes in the transaction of its updates (shots.server).
 */
type ShotsStamp = { maxRowid: number; exclusions: number; restored: number; recomputes: number; lastRecompute: number };

function stampQueries(db: Db, sensorId: string) {
  return [
    // a bare max(rowid) is one step down the table's b-tree; wrapped in anything it is a scan
    // (each figure is named: a read transaction's raw rows, shotsStampIn, come back by these names)
    db.select({ maxRowid: sql<number | null>`max(${shots}.rowid)`.as("maxRowid") }).from(shots),
    db
      .select({ n: sql<number>`count(*)`.as("n"), restored: sql<number>`count(${exclusions.restoredAt})`.as("restored") })
      .from(exclusions)
      .crossJoin(shots) // CROSS JOIN keeps exclusions as the outer loop
      .where(and(eq(shots.id, exclusions.shotId), eq(shots.sensorId, sensorId))),
    db
      .select({ n: sql<number>`count(*)`.as("n"), last: sql<number>`ifnull(max(${auditLog}.rowid), 0)`.as("last") })
      .from(auditLog)
      .where(and(eq(auditLog.entity, "sensor"), eq(auditLog.entityId, sensorId), eq(auditLog.action, RECOMPUTE_ACTION))),
  ] as const;
}

type StampRows = [{ maxRowid: number | null }[], { n: number; restored: number }[], { n: number; last: number }[]];
function stampOf([a, b, c]: StampRows): ShotsStamp {
  return {
    maxRowid: Number(a[0]?.maxRowid ?? 0),
    exclusions: Number(b[0]?.n ?? 0),
    restored: Number(b[0]?.restored ?? 0),
    recomputes: Number(c[0]?.n ?? 0),
    lastRecompute: Number(c[0]?.last ?? 0),
  };
}

/**
 * The shots' stamp as `tx` sees it: a read transaction of the libSQL client (its own
 * connection and snapshot), where the streamed per-shot rows are read (reports.server.ts).
 */
export async function shotsStampIn(tx: Pick<Transaction, "execute">, db: Db, sensorId: string): Promise<string> {
  const rows: unknown[] = [];
  for (const q of stampQueries(db, sensorId)) {
    const { sql, params } = q.toSQL();
    rows.push((await tx.execute({ sql, args: params as InArgs })).rows);
  }
  return JSON.stringify(stampOf(rows as StampRows));
}

const ruleCols = { id: projects.id, ...RULE_COLUMNS };

/** issue 15: the certificates of the (small) tape and EDM registries, read with every report's state. */
const certCols = <T extends typeof tapes | typeof edms>(t: T) => ({
  id: t.id,
  label: t.label,
  number: t.certNumber,
  laboratory: t.certLaboratory,
  issued: t.certIssued,
  due: t.certDue,
});
export type CertRow = { id: string; label: string; number: string | null; laboratory: string | null; issued: string | null; due: string | null };

export type State = {
  /** Undefined when unknown or outside the reader's projects (both answer 404). */
  sensor: typeof sensors.$inferSelect | undefined;
  rule: { rule: Rule; projectId: string | null } | QueryError;
  tapeCerts: CertRow[];
  edmCerts: CertRow[];
  lastBias: number | null;
  stamp: ShotsStamp;
  /** Everything above as one string: the kept report of a query is good while it is unchanged. */
  fingerprint: string;
};

/**
 * One read transaction: the sensor, the rule of the report (the chosen project's, which the
 * reader must belong to; without one, the project's when the sensor belongs to exactly one live
 * project of the reader's, else the default rule of ranging.md §6), the bias of the last
 * approved sign-off (drift), the certificates, the stamp of the shots and the sessions' projects
 * (an admin assigning a session to a project changes what members see).
 */
export async function readState(db: Db, sensorId: string, projectId: string | undefined, projectIds: ProjectFilter): Promise<State> {
  const mine = (col: typeof projectSensors.projectId | typeof projects.id) => (projectIds ? (projectIds.length ? inArray(col, projectIds) : sql`0`) : undefined);
  const [sensorRows, ruleRows, biasRows, tapeCerts, edmCerts, visible, sessionProjects, ...stamps] = await db.batch([
    db.select().from(sensors).where(eq(sensors.id, sensorId)),
    db
      .select(ruleCols)
      .from(projects)
      .where(
        projectId
          ? and(eq(projects.id, projectId), mine(projects.id))
          : and(isNull(projects.retiredAt), mine(projects.id), inArray(projects.id, db.select({ id: projectSensors.projectId }).from(projectSensors).where(eq(projectSensors.sensorId, sensorId)))),
      )
      .limit(2),
    db
      .select({ biasMm: signOffs.biasMm })
      .from(signOffs)
      .where(and(eq(signOffs.sensorId, sensorId), eq(signOffs.decision, "approved")))
      .orderBy(desc(signOffs.createdAt))
      .limit(1),
    db.select(certCols(tapes)).from(tapes),
    db.select(certCols(edms)).from(edms),
    // a member sees a sensor linked to one of their projects or used in one of their sessions
    db
      .select({ one: sql<number>`1` })
      .from(sensors)
      .where(
        and(
          eq(sensors.id, sensorId),
          projectIds
            ? or(
                exists(
                  db
                    .select({ one: sql`1` })
                    .from(projectSensors)
                    .where(and(eq(projectSensors.sensorId, sensorId), mine(projectSensors.projectId))),
                ),
                exists(
                  db
                    .select({ one: sql`1` })
                    .from(checkSessions)
                    .where(and(eq(checkSessions.sensorId, sensorId), projectIds.length ? inArray(checkSessions.projectId, projectIds) : sql`0`)),
                ),
              )
            : undefined,
        ),
      ),
    db
      .select({ v: sql<string | null>`group_concat(${checkSessions.id} || '=' || ifnull(${checkSessions.projectId}, ''))` })
      .from(checkSessions)
      .where(eq(checkSessions.sensorId, sensorId)),
    ...stampQueries(db, sensorId),
  ]);
  const rule: State["rule"] = projectId
    ? ruleRows[0]
      ? { rule: ruleOf(ruleRows[0]), projectId: ruleRows[0].id }
      : { status: 404, body: { error: `No project ${projectId}.` } }
    : ruleRows.length === 1
      ? { rule: ruleOf(ruleRows[0]!), projectId: ruleRows[0]!.id }
      : { rule: DEFAULT_RULE, projectId: null };
  const lastBias = biasRows[0]?.biasMm ?? null;
  const stamp = stampOf(stamps as StampRows);
  const sensor = visible.length ? sensorRows[0] : undefined;
  // the certificates are part of the report (traceability): an edit to one is a new report
  return {
    sensor,
    rule,
    tapeCerts,
    edmCerts,
    lastBias,
    stamp,
    fingerprint: JSON.stringify([sensor, "rule" in rule ? [rule.rule, rule.projectId] : null, lastBias, stamp, tapeCerts, edmCerts, sessionProjects[0]?.v ?? null]),
  };
}
