// The audit trail: append-only; every change of the registry, users, exclusions and
// sign-offs writes one row here.
import { and, desc, eq } from "drizzle-orm";
import { getDb, type Db } from "~/db/client.server";
import { auditLog } from "~/db/schema";

type Tx = Pick<Db, "insert">;

export async function audit(actorUserId: string | null, action: string, entity: string, entityId: string | null, detail?: unknown, tx: Tx = getDb()) {
  await tx.insert(auditLog).values({ actorUserId, action, entity, entityId, detail: detail ?? null });
}

export async function auditFor(entity: string, entityId: string, limit = 100) {
  return getDb()
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.entity, entity), eq(auditLog.entityId, entityId)))
    .orderBy(desc(auditLog.at))
    .limit(limit);
}
