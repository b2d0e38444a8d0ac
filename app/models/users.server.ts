// People and their sign-in state. Admin changes take who is asking, check the role again
// (defence in depth behind the route guard) and land in the audit trail.
import { and, asc, desc, eq, inArray, isNull, sql } from "drizzle-orm";
import { AppError } from "~/contract/errors";
import { getDb } from "~/db/client.server";
import { apiTokens, authSessions, ROLES, users, type Role } from "~/db/schema";
import { audit } from "~/models/audit.server";
import { sendTemplateMail } from "~/mail/mailer.server";

export type { Actor } from "./actor";
import type { Actor } from "./actor";

export function normalizeEmail(email: string) {
  return email.trim().toLowerCase();
}

function forbidUnlessAdmin(actor: Actor) {
  if (actor.role !== "admin") throw new AppError(403, "Only an admin may manage users.");
}

/** Active users' addresses with any of these roles (for notices such as a sensor sign-off). */
export async function listUserEmailsByRole(roles: Role[]): Promise<string[]> {
  if (roles.length === 0) return [];
  const rows = await getDb()
    .select({ email: users.email })
    .from(users)
    .where(and(inArray(users.role, roles), eq(users.active, true)))
    .orderBy(asc(users.email));
  return rows.map((r) => r.email);
}

export type UserRow = typeof users.$inferSelect;

export async function findUserByEmail(email: string): Promise<UserRow | null> {
  const rows = await getDb()
    .select()
    .from(users)
    .where(eq(users.email, normalizeEmail(email)))
    .limit(1);
  return rows[0] ?? null;
}

export async function usersTableIsEmpty() {
  const [row] = await getDb()
    .select({ n: sql<number>`count(*)` })
    .from(users);
  return Number(row?.n ?? 0) === 0;
}

/**
 * The very first sign-in of an empty installation makes its admin. The insert only happens
 * while the table is still empty (one statement), so two racing first sign-ins make one admin.
 */
export async function createFirstAdmin(email: string) {
  const e = normalizeEmail(email);
  const id = crypto.randomUUID();
  const rs = await getDb().$client.execute({
    sql: "INSERT INTO users (id, email, name, role, active) SELECT ?, ?, '', 'admin', 1 WHERE NOT EXISTS (SELECT 1 FROM users)",
    args: [id, e],
  });
  if (rs.rowsAffected !== 1) return null;
  await audit(id, "user.first-admin", "user", id, { email: e });
  return findUserByEmail(e);
}

export async function recordSignIn(userId: string) {
  await getDb().update(users).set({ lastSignInAt: new Date().toISOString() }).where(eq(users.id, userId));
  await audit(userId, "auth.sign-in", "user", userId);
}

export async function listUsers(actor: Actor) {
  forbidUnlessAdmin(actor);
  const now = new Date().toISOString();
  return getDb()
    .select({
      id: users.id,
      email: users.email,
      name: users.name,
      role: users.role,
      active: users.active,
      createdAt: users.createdAt,
      lastSignInAt: users.lastSignInAt,
      // Written out in full: drizzle renders ${users.id} unqualified here, which the subquery
      // would read as s.id.
      activeSessions: sql<number>`(SELECT count(*) FROM auth_sessions s WHERE s.user_id = "users"."id" AND s.revoked_at IS NULL AND s.expires_at > ${now})`,
    })
    .from(users)
    .orderBy(desc(users.active), asc(users.email));
}

export async function getUserDetail(actor: Actor, userId: string) {
  forbidUnlessAdmin(actor);
  const db = getDb();
  const [user] = await db.select().from(users).where(eq(users.id, userId)).limit(1);
  if (!user) return null;
  const now = new Date().toISOString();
  const sessions = await db
    .select({
      id: authSessions.id,
      createdAt: authSessions.createdAt,
      expiresAt: authSessions.expiresAt,
      userAgent: authSessions.userAgent,
      ip: authSessions.ip,
    })
    .from(authSessions)
    .where(and(eq(authSessions.userId, userId), isNull(authSessions.revokedAt), sql`${authSessions.expiresAt} > ${now}`))
    .orderBy(desc(authSessions.createdAt));
  const tokens = await db
    .select({ id: apiTokens.id, name: apiTokens.name, createdAt: apiTokens.createdAt, lastUsedAt: apiTokens.lastUsedAt })
    .from(apiTokens)
    .where(and(eq(apiTokens.userId, userId), isNull(apiTokens.revokedAt)))
    .orderBy(desc(apiTokens.createdAt));
  return { user, sessions, tokens };
}

async function activeAdminCount() {
  const [row] = await getDb()
    .select({ n: sql<number>`count(*)` })
    .from(users)
    .where(and(eq(users.role, "admin"), eq(users.active, true)));
  return Number(row?.n ?? 0);
}

export async function inviteUser(actor: Actor, input: { email: string; name: string; role: Role }) {
  forbidUnlessAdmin(actor);
  const email = normalizeEmail(input.email);
  if (await findUserByEmail(email)) throw new AppError(400, "A user with this e-mail address already exists.", "email");
  const [row] = await getDb().insert(users).values({ email, name: input.name.trim(), role: input.role, invitedBy: actor.id }).returning({ id: users.id });
  await audit(actor.id, "user.invite", "user", row!.id, { email, role: input.role, name: input.name.trim() });
  const mail = await sendTemplateMail("invitation", email, {
    name: input.name.trim(),
    role: input.role,
    inviterName: actor.name || actor.email || "An administrator",
    loginUrl: "/login",
  });
  return { id: row!.id, mailSent: mail.ok };
}

export async function changeRole(actor: Actor, userId: string, role: Role) {
  forbidUnlessAdmin(actor);
  if (!ROLES.includes(role)) throw new AppError(400, "Pick one of the four roles.", "role");
  const [user] = await getDb().select().from(users).where(eq(users.id, userId)).limit(1);
  if (!user) return null;
  if (user.role === role) return user;
  if (user.role === "admin" && user.active && (await activeAdminCount()) <= 1) {
    throw new AppError(400, "This is the last active admin: make another admin first.", "role");
  }
  await getDb().update(users).set({ role }).where(eq(users.id, userId));
  await audit(actor.id, "user.role", "user", userId, { from: user.role, to: role });
  return { ...user, role };
}

export async function setUserActive(actor: Actor, userId: string, active: boolean) {
  forbidUnlessAdmin(actor);
  const db = getDb();
  const [user] = await db.select().from(users).where(eq(users.id, userId)).limit(1);
  if (!user) return null;
  if (!active && user.role === "admin" && user.active && (await activeAdminCount()) <= 1) {
    throw new AppError(400, "This is the last active admin: make another admin first.");
  }
  if (user.active === active) return user;
  await db.update(users).set({ active }).where(eq(users.id, userId));
  let revoked = 0;
  if (!active) revoked = await revokeSessionRows(userId);
  await audit(actor.id, active ? "user.reactivate" : "user.deactivate", "user", userId, { sessionsRevoked: revoked });
  return { ...user, active };
}

async function revokeSessionRows(userId: string, sessionId?: string) {
  const rows = await getDb()
    .update(authSessions)
    .set({ revokedAt: new Date().toISOString() })
    .where(and(eq(authSessions.userId, userId), isNull(authSessions.revokedAt), sessionId ? eq(authSessions.id, sessionId) : undefined))
    .returning({ id: authSessions.id });
  return rows.length;
}

/** Ends every sign-in of the user (or one session) at once: the next request is signed out. */
export async function revokeSessions(actor: Actor, userId: string, sessionId?: string) {
  forbidUnlessAdmin(actor);
  const n = await revokeSessionRows(userId, sessionId);
  await audit(actor.id, "user.revoke-sessions", "user", userId, { sessionsRevoked: n, sessionId: sessionId ?? null });
  return n;
}

/** `npm run user -- add`: creates or updates (idempotent), no e-mail sent. */
export async function upsertUserFromCli(input: { email: string; role: Role; name?: string }) {
  const email = normalizeEmail(input.email);
  const db = getDb();
  const existing = await findUserByEmail(email);
  if (!existing) {
    const [row] = await db
      .insert(users)
      .values({ email, role: input.role, name: input.name?.trim() ?? "" })
      .returning({ id: users.id });
    await audit(null, "user.add-cli", "user", row!.id, { email, role: input.role });
    return { id: row!.id, created: true, changed: true };
  }
  const next = {
    role: input.role,
    name: input.name !== undefined ? input.name.trim() : existing.name,
    active: true,
  };
  const changed = next.role !== existing.role || next.name !== existing.name || !existing.active;
  if (changed) {
    await db.update(users).set(next).where(eq(users.id, existing.id));
    await audit(null, "user.update-cli", "user", existing.id, { from: { role: existing.role, name: existing.name, active: existing.active }, to: next });
  }
  return { id: existing.id, created: false, changed };
}
