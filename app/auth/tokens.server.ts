import { and, eq, isNull } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { apiTokens, users } from "~/db/schema";
import type { SessionUser } from "./session.server";
import { stmtOf, writeBatch } from "~/models/sync-write.server";
import { isTransientDbError } from "~/db/transient.server";
import { startedSyncPool } from "~/models/sync-pool.server";

export async function sha256Hex(text: string) {
  const digest = await crypto.subtle.digest("SHA-256", new TextEncoder().encode(text));
  return Array.from(new Uint8Array(digest), (b) => b.toString(16).padStart(2, "0")).join("");
}

/** A new random token: shown once, only its hash is stored. */
export function newTokenValue() {
  const bytes = crypto.getRandomValues(new Uint8Array(32));
  return "sbk_" + Array.from(bytes, (b) => b.toString(16).padStart(2, "0")).join("");
}

export async function createApiToken(userId: string, name: string) {
  const token = newTokenValue();
  const [row] = await getDb()
    .insert(apiTokens)
    .values({ userId, name, tokenHash: await sha256Hex(token) })
    .returning({ id: apiTokens.id });
  return { id: row!.id, token };
}

const LAST_USED_RESOLUTION_MS = 60_000;

export async function userFromBearer(request: Request): Promise<SessionUser | null> {
  const header = request.headers.get("Authorization");
  const match = header?.match(/^Bearer\s+(\S+)$/i);
  if (!match) return null;
  const hash = await sha256Hex(match[1]!);
  const db = getDb();
  const rows = await db
    .select({ id: users.id, email: users.email, name: users.name, role: users.role, tokenId: apiTokens.id, lastUsedAt: apiTokens.lastUsedAt })
    .from(apiTokens)
    .innerJoin(users, eq(users.id, apiTokens.userId))
    .where(and(eq(apiTokens.tokenHash, hash), isNull(apiTokens.revokedAt), eq(users.active, true)))
    .limit(1);
  const row = rows[0];
  if (!row) return null;
  // "Last used" to the minute is enough, and spares a write on every request of a busy pipeline.
  const now = Date.now();
  if (!row.lastUsedAt || now - Date.parse(row.lastUsedAt) > LAST_USED_RESOLUTION_MS) {
    const touch = stmtOf(
      db
        .update(apiTokens)
        .set({ lastUsedAt: new Date(now).toISOString() })
        .where(eq(apiTokens.id, row.tokenId))
        .toSQL(),
    );
    // issue 16: while syncs run (their worker started), where they write, so this request thread
    // never sleeps on SQLite's write lock, and not waited for; without syncs, here. A note to the
    // minute: a busy database skips it (the next use in a minute notes it).
    const offThread = startedSyncPool() !== null;
    const written = (offThread ? writeBatch(db, [touch]) : db.$client.execute(touch)).catch((e) => {
      if (!isTransientDbError(e)) console.error("auth: could not note a token's last use", e);
    });
    if (!offThread) await written;
  }
  return { id: row.id, email: row.email, name: row.name, role: row.role, sessionId: null, via: "token" };
}
