// Cookie session holding only a server-side session id; the row decides whether it is valid.
import { createCookieSessionStorage, type SessionStorage } from "react-router";
import { and, eq, gt, isNull } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { authSessions, users, type Role } from "~/db/schema";
import { cookieSecure, getEnv } from "~/env.server";

export type SessionUser = { id: string; email: string; name: string; role: Role; sessionId: string | null; via: "cookie" | "token" };

type SessionData = { sid: string };
let storage: SessionStorage<SessionData> | undefined;

export function getSessionStorage() {
  if (!storage) {
    const env = getEnv();
    storage = createCookieSessionStorage<SessionData>({
      cookie: {
        name: "__shotbook",
        httpOnly: true,
        sameSite: "lax",
        path: "/",
        secure: cookieSecure(env),
        secrets: env.SESSION_SECRET,
        maxAge: 60 * 60 * 24 * Math.max(env.CREW_SESSION_DAYS, env.SESSION_DAYS),
      },
    });
  }
  return storage;
}

export function resetSessionStorage() {
  storage = undefined;
}

export async function getCookieSession(request: Request) {
  return getSessionStorage().getSession(request.headers.get("Cookie"));
}

/** Days a sign-in lasts: crews get a field week (the tablet may be offline for days). */
export function sessionDaysFor(role: Role) {
  const env = getEnv();
  return role === "crew" ? env.CREW_SESSION_DAYS : env.SESSION_DAYS;
}

/** Creates the server-side session row and returns the Set-Cookie header value. */
export async function createAuthSession(user: { id: string; role: Role }, meta: { userAgent?: string | null; ip?: string | null } = {}) {
  const db = getDb();
  const days = sessionDaysFor(user.role);
  const expiresAt = new Date(Date.now() + days * 86400_000).toISOString();
  const [row] = await db
    .insert(authSessions)
    .values({ userId: user.id, expiresAt, userAgent: meta.userAgent ?? null, ip: meta.ip ?? null })
    .returning({ id: authSessions.id });
  const session = await getSessionStorage().getSession();
  session.set("sid", row!.id);
  const cookie = await getSessionStorage().commitSession(session, { maxAge: days * 86400 });
  return { sessionId: row!.id, cookie };
}

export async function destroyAuthSession(request: Request) {
  const session = await getCookieSession(request);
  const sid = session.get("sid") as string | undefined;
  if (sid) {
    await getDb().update(authSessions).set({ revokedAt: new Date().toISOString() }).where(eq(authSessions.id, sid));
  }
  return getSessionStorage().destroySession(session);
}

export async function userFromCookie(request: Request): Promise<SessionUser | null> {
  const session = await getCookieSession(request);
  const sid = session.get("sid") as string | undefined;
  if (!sid) return null;
  const now = new Date().toISOString();
  const rows = await getDb()
    .select({ id: users.id, email: users.email, name: users.name, role: users.role, sessionId: authSessions.id })
    .from(authSessions)
    .innerJoin(users, eq(users.id, authSessions.userId))
    .where(and(eq(authSessions.id, sid), isNull(authSessions.revokedAt), gt(authSessions.expiresAt, now), eq(users.active, true)))
    .limit(1);
  const row = rows[0];
  return row ? { ...row, via: "cookie" } : null;
}
