// QA exclusions of single shots: a written reason, never deleted (a restore closes the row),
// shots.excluded kept in step, and both changes in the audit trail.
import { and, desc, eq, isNull } from "drizzle-orm";
import { getDb, type Db } from "~/db/client.server";
import { auditLog, exclusions, shots } from "~/db/schema";
import { getShotJson, type ShotJson } from "./shots.server";
import type { Actor } from "./actor";
import { scopeOf, sessionIdInScope } from "./scope.server";
import { exclusionSchema, issuesToErrors, type RecordError } from "~/contract/sync";

export type ExclusionRow = {
  id: string;
  reason: string;
  byUserId: string;
  createdAt: string;
  restoredAt: string | null;
  restoredBy: string | null;
  restoreReason: string | null;
};
export type ShotState = { shot: ShotJson; exclusions: ExclusionRow[] };
type Answer = { status: 200; body: ShotState } | { status: 400 | 404 | 409; body: { error: string; errors?: RecordError[] } };

export async function exclusionsOf(shotId: string, db: Db = getDb()): Promise<ExclusionRow[]> {
  return db
    .select({
      id: exclusions.id,
      reason: exclusions.reason,
      byUserId: exclusions.byUserId,
      createdAt: exclusions.createdAt,
      restoredAt: exclusions.restoredAt,
      restoredBy: exclusions.restoredBy,
      restoreReason: exclusions.restoreReason,
    })
    .from(exclusions)
    .where(eq(exclusions.shotId, shotId))
    .orderBy(desc(exclusions.createdAt), desc(exclusions.id));
}

async function state(shotId: string, db: Db): Promise<ShotState> {
  const [shot, history] = await Promise.all([getShotJson(shotId, db), exclusionsOf(shotId, db)]);
  return { shot: shot!, exclusions: history };
}

function parseReason(body: unknown): { reason: string } | { errors: RecordError[] } {
  const r = exclusionSchema.safeParse(body ?? {});
  return r.success ? r.data : { errors: issuesToErrors(r.error.issues) };
}

/** Excludes a shot from the reports (the QA lead's reason is required). */
export async function excludeShot(actor: Actor, shotId: string, body: unknown, db: Db = getDb()): Promise<Answer> {
  // issue 14: a shot outside the actor's projects answers as an unknown one
  const scope = await scopeOf(actor, db);
  const [shot] = await db
    .select({ id: shots.id, excluded: shots.excluded })
    .from(shots)
    .where(and(eq(shots.id, shotId), sessionIdInScope(scope, shots.sessionId)));
  if (!shot) return { status: 404, body: { error: `No shot ${shotId}.` } };
  const parsed = parseReason(body);
  if ("errors" in parsed) return { status: 400, body: { error: "A reason is required.", errors: parsed.errors } };
  if (shot.excluded) return { status: 409, body: { error: "This shot is excluded already; restore it first to change the reason." } };
  const id = crypto.randomUUID();
  // One batch: the three writes land together or not at all (audit() would write its row on
  // its own at once, so the audit row of the same shape is part of the batch here).
  await db.batch([
    db.insert(exclusions).values({ id, shotId, reason: parsed.reason, byUserId: actor.id }),
    db.update(shots).set({ excluded: true }).where(eq(shots.id, shotId)),
    db.insert(auditLog).values({ actorUserId: actor.id, action: "shot.exclude", entity: "shot", entityId: shotId, detail: { exclusionId: id, reason: parsed.reason } }),
  ]);
  return { status: 200, body: await state(shotId, db) };
}

/** Restores an excluded shot: the exclusion row stays, closed with who, when and why. */
export async function restoreShot(actor: Actor, shotId: string, body: unknown, db: Db = getDb()): Promise<Answer> {
  const scope = await scopeOf(actor, db);
  const [shot] = await db
    .select({ id: shots.id })
    .from(shots)
    .where(and(eq(shots.id, shotId), sessionIdInScope(scope, shots.sessionId)));
  if (!shot) return { status: 404, body: { error: `No shot ${shotId}.` } };
  const parsed = parseReason(body);
  if ("errors" in parsed) return { status: 400, body: { error: "A reason is required.", errors: parsed.errors } };
  const [open] = await db
    .select({ id: exclusions.id })
    .from(exclusions)
    .where(and(eq(exclusions.shotId, shotId), isNull(exclusions.restoredAt)))
    .orderBy(desc(exclusions.createdAt))
    .limit(1);
  if (!open) return { status: 409, body: { error: "This shot is not excluded." } };
  const now = new Date().toISOString();
  await db.batch([
    db.update(exclusions).set({ restoredAt: now, restoredBy: actor.id, restoreReason: parsed.reason }).where(eq(exclusions.id, open.id)),
    db.update(shots).set({ excluded: false }).where(eq(shots.id, shotId)),
    db.insert(auditLog).values({ actorUserId: actor.id, action: "shot.restore", entity: "shot", entityId: shotId, detail: { exclusionId: open.id, reason: parsed.reason } }),
  ]);
  return { status: 200, body: await state(shotId, db) };
}
