// API tokens for machines (post-processing pipelines, scripts). A token acts as its user;
// only its SHA-256 hash is stored, the value is shown once.
import { and, desc, eq, isNull } from "drizzle-orm";
import { AppError } from "~/contract/errors";
import { createApiToken } from "~/auth/tokens.server";
import { getDb } from "~/db/client.server";
import { apiTokens, users } from "~/db/schema";
import { audit } from "~/models/audit.server";
import type { Actor } from "~/models/users.server";

function forbidUnlessAdmin(actor: Actor) {
  if (actor.role !== "admin") throw new AppError(403, "Only an admin may manage API tokens.");
}

export async function listTokens(actor: Actor, opts: { includeRevoked?: boolean } = {}) {
  forbidUnlessAdmin(actor);
  return getDb()
    .select({
      id: apiTokens.id,
      name: apiTokens.name,
      createdAt: apiTokens.createdAt,
      lastUsedAt: apiTokens.lastUsedAt,
      revokedAt: apiTokens.revokedAt,
      userId: users.id,
      userEmail: users.email,
      userName: users.name,
      userRole: users.role,
      userActive: users.active,
    })
    .from(apiTokens)
    .innerJoin(users, eq(users.id, apiTokens.userId))
    .where(opts.includeRevoked ? undefined : isNull(apiTokens.revokedAt))
    .orderBy(desc(apiTokens.createdAt));
}

/** Creates a token for a user; returns the value, which is never shown again. */
export async function createTokenFor(actor: Actor | null, userId: string, name: string) {
  if (actor) forbidUnlessAdmin(actor);
  const [user] = await getDb().select({ id: users.id, active: users.active }).from(users).where(eq(users.id, userId)).limit(1);
  if (!user) return null;
  const { id, token } = await createApiToken(userId, name.trim());
  await audit(actor?.id ?? null, "token.create", "api_token", id, { userId, name: name.trim(), via: actor ? "admin" : "cli" });
  return { id, token, userActive: user.active };
}

export async function revokeToken(actor: Actor, tokenId: string) {
  forbidUnlessAdmin(actor);
  const rows = await getDb()
    .update(apiTokens)
    .set({ revokedAt: new Date().toISOString() })
    .where(and(eq(apiTokens.id, tokenId), isNull(apiTokens.revokedAt)))
    .returning({ id: apiTokens.id, userId: apiTokens.userId, name: apiTokens.name });
  const row = rows[0];
  if (!row) return null;
  await audit(actor.id, "token.revoke", "api_token", row.id, { userId: row.userId, name: row.name });
  return row;
}
