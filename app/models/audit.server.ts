// The audit trail: append-only; every change of the registry, users, exclusions and
// sign-offs writes one row here.
import { and, desc, eq } from "drizzle-orm";
import { getDb, type Db } from "~/db/client.server";
import { auditLog } from "~/db/schema";
import { stmtOf, writeBatch } from "./sync-write.server";

type Tx = Pick<Db, "insert">;

export async function audit(actorUserId: string | null, action: string, entity: string, entityId: string | null, detail?: unknown, tx: Tx = getDb()) {
  await tx.insert(auditLog).values({ actorUserId, action, entity, entityId, detail: detail ?? null });
}

/**
 * The same row, written where the sync's writes are (issue 16): on the production server a sync
 * worker thread, so the request thread never waits for SQLite's write lock, which the sync
 * workers hold while tablets sync (a wait there is a sleep that holds every other request; one
 * measured 93 ms). For the writes that syncs themselves cause, such as the verdict notice's.
 */
export async function auditOffThread(actorUserId: string | null, action: string, entity: string, entityId: string | null, detail?: unknown) {
  const db = getDb();
  await writeBatch(db, [
    stmtOf(
      db
        .insert(auditLog)
        .values({ actorUserId, action, entity, entityId, detail: detail ?? null })
        .toSQL(),
    ),
  ]);
}

export async function auditFor(entity: string, entityId: string, limit = 100) {
  return getDb()
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.entity, entity), eq(auditLog.entityId, entityId)))
    .orderBy(desc(auditLog.at))
    .limit(limit);
}
