// Session cookie settings: Secure in production (with the documented COOKIE_SECURE=false switch
// for plain-http local runs) and SESSION_SECRET rotation (first signs, all verify).
import { randomBytes } from "node:crypto";
import { afterEach, beforeAll, expect, test } from "vitest";
import { createAuthSession, resetSessionStorage, userFromCookie } from "~/auth/session.server";
import { getDb } from "~/db/client.server";
import { users } from "~/db/schema";
import { resetEnvCache } from "~/env.server";
import { getRequest } from "./auth-helpers";

let user: { id: string; role: "qa" };
const saved = { ...process.env };
/** Production refuses short or published secrets (tests/integration/env-secret.test.ts). */
const STRONG = randomBytes(48).toString("base64");

beforeAll(async () => {
  const [row] = await getDb().insert(users).values({ email: "sessions@fernhollow.test", role: "qa" }).returning();
  user = { id: row!.id, role: "qa" };
});

afterEach(() => {
  for (const k of ["NODE_ENV", "COOKIE_SECURE", "SESSION_SECRET"] as const) {
    if (saved[k] === undefined) delete process.env[k];
    else process.env[k] = saved[k];
  }
  resetEnvCache();
  resetSessionStorage();
});

function useEnv(env: Record<string, string | undefined>) {
  for (const [k, v] of Object.entries(env)) {
    if (v === undefined) delete process.env[k];
    else process.env[k] = v;
  }
  resetEnvCache();
  resetSessionStorage();
}

test("the cookie is HttpOnly, SameSite=Lax and Secure in production; COOKIE_SECURE=false turns Secure off", async () => {
  useEnv({ NODE_ENV: "production", COOKIE_SECURE: undefined, SESSION_SECRET: STRONG });
  const prod = (await createAuthSession(user)).cookie;
  expect(prod).toMatch(/; HttpOnly/i);
  expect(prod).toMatch(/; SameSite=Lax/i);
  expect(prod).toMatch(/; Secure/i);
  useEnv({ NODE_ENV: "production", COOKIE_SECURE: "false" });
  expect((await createAuthSession(user)).cookie).not.toMatch(/; Secure/i);
  useEnv({ NODE_ENV: "test", COOKIE_SECURE: undefined });
  expect((await createAuthSession(user)).cookie).not.toMatch(/; Secure/i);
  // Non-crew roles get SESSION_DAYS (7 by default).
  expect((await createAuthSession(user)).cookie).toMatch(new RegExp(`Max-Age=${7 * 86400}`));
});

test("rotating SESSION_SECRET: cookies signed with the old secret keep working while it is listed", async () => {
  useEnv({ SESSION_SECRET: "old-secret" });
  const cookie = (await createAuthSession(user)).cookie.split(";")[0]!;
  useEnv({ SESSION_SECRET: "new-secret, old-secret" });
  expect(await userFromCookie(getRequest("/", { cookie }))).toMatchObject({ id: user.id });
  const fresh = (await createAuthSession(user)).cookie.split(";")[0]!;
  useEnv({ SESSION_SECRET: "new-secret" });
  expect(await userFromCookie(getRequest("/", { cookie }))).toBeNull();
  expect(await userFromCookie(getRequest("/", { cookie: fresh }))).toMatchObject({ id: user.id });
});

test("an expired session row is refused even with a valid cookie", async () => {
  const { cookie, sessionId } = await createAuthSession(user);
  const c = cookie.split(";")[0]!;
  expect(await userFromCookie(getRequest("/", { cookie: c }))).not.toBeNull();
  await getDb().$client.execute({ sql: "UPDATE auth_sessions SET expires_at = ? WHERE id = ?", args: [new Date(Date.now() - 1000).toISOString(), sessionId] });
  expect(await userFromCookie(getRequest("/", { cookie: c }))).toBeNull();
});
