// API tokens and session revocation through the real admin actions and GET /api/me.
import { afterAll, beforeAll, expect, test } from "vitest";
import { and, eq } from "drizzle-orm";
import { createAuthSession } from "~/auth/session.server";
import { sha256Hex } from "~/auth/tokens.server";
import { getDb } from "~/db/client.server";
import { apiTokens, auditLog, users } from "~/db/schema";
import { resetEnvCache } from "~/env.server";
import { startFakeSmtp, type FakeSmtp } from "~/mail/fake-smtp.server";
import * as apiMe from "~/routes/api.me";
import * as adminTokens from "~/routes/admin.tokens";
import * as adminUser from "~/routes/admin.users.$userId";
import * as adminLanding from "~/routes/admin";
import { answerOf, args, formRequest, getRequest, tempMailDir } from "./auth-helpers";

let smtp: FakeSmtp;
let admin: { id: string; cookie: string };
let pipelineUser: { id: string };

beforeAll(async () => {
  smtp = await startFakeSmtp({ port: 0, mailDir: tempMailDir("tokens") });
  process.env.SMTP_URL = `smtp://127.0.0.1:${smtp.port}`;
  resetEnvCache();
  const db = getDb();
  const [a] = await db.insert(users).values({ email: "root@fernhollow.test", name: "Rowan Admin", role: "admin" }).returning();
  const [p] = await db.insert(users).values({ email: "pipeline@fernhollow.test", name: "Nightly export", role: "qa" }).returning();
  admin = { id: a!.id, cookie: (await createAuthSession(a!)).cookie.split(";")[0]! };
  pipelineUser = { id: p!.id };
});

afterAll(async () => {
  await smtp?.close();
});

async function makeToken(name: string) {
  const a = await answerOf(() => adminTokens.action(args(formRequest("/admin/tokens", { intent: "create", userId: pipelineUser.id, name }, { cookie: admin.cookie }))));
  expect(a.status).toBe(200);
  const token = (a.body as { created: { token: string } }).created.token;
  expect(token).toMatch(/^sbk_[0-9a-f]{64}$/);
  return token;
}

async function me(opts: { bearer?: string; cookie?: string }) {
  return answerOf(() => apiMe.loader(args(getRequest("/api/me", opts))));
}

test("a token made on the admin screen authenticates GET /api/me as its user, and records its last use", async () => {
  const token = await makeToken("nightly report export");
  const [row] = await getDb().select().from(apiTokens).where(eq(apiTokens.name, "nightly report export"));
  expect(row!.tokenHash).toBe(await sha256Hex(token));
  expect(row!.tokenHash).not.toContain(token.slice(4, 20));
  expect(row!.lastUsedAt).toBeNull();

  const a = await me({ bearer: token });
  expect(a.status).toBe(200);
  expect(a.body).toEqual({ id: pipelineUser.id, email: "pipeline@fernhollow.test", name: "Nightly export", role: "qa" });
  const [after] = await getDb().select().from(apiTokens).where(eq(apiTokens.id, row!.id));
  expect(after!.lastUsedAt).not.toBeNull();

  const audits = await getDb()
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.action, "token.create"), eq(auditLog.entityId, row!.id)));
  expect(audits).toHaveLength(1);
  expect(audits[0]!.actorUserId).toBe(admin.id);
});

test("API routes answer 401 as JSON, never an HTML redirect, for no, unknown or malformed credentials", async () => {
  for (const opts of [{}, { bearer: "sbk_" + "0".repeat(64) }, { bearer: "" }, { cookie: "__shotbook=forged" }]) {
    const a = await me(opts);
    expect(a.status).toBe(401);
    expect(a.location).toBeNull();
    expect(a.headers.get("Content-Type")).toMatch(/application\/json/);
    expect((a.body as { error: string }).error).toMatch(/Not signed in/);
  }
});

test("a revoked token stops working at once", async () => {
  const token = await makeToken("to be revoked");
  expect((await me({ bearer: token })).status).toBe(200);
  const [row] = await getDb().select().from(apiTokens).where(eq(apiTokens.name, "to be revoked"));
  const r = await answerOf(() => adminTokens.action(args(formRequest("/admin/tokens", { intent: "revoke", tokenId: row!.id }, { cookie: admin.cookie }))));
  expect(r.status).toBe(302);
  expect((await me({ bearer: token })).status).toBe(401);
  const audits = await getDb()
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.action, "token.revoke"), eq(auditLog.entityId, row!.id)));
  expect(audits).toHaveLength(1);
  // Revoking again answers 404, not a second audit row.
  const again = await answerOf(() => adminTokens.action(args(formRequest("/admin/tokens", { intent: "revoke", tokenId: row!.id }, { cookie: admin.cookie }))));
  expect(again.status).toBe(404);
});

test("revoking a person's sessions signs every device out at once: pages redirect, the API answers 401", async () => {
  const [u] = await getDb().select().from(users).where(eq(users.id, pipelineUser.id));
  const phone = (await createAuthSession(u!)).cookie.split(";")[0]!;
  const tablet = (await createAuthSession(u!)).cookie.split(";")[0]!;
  expect((await me({ cookie: phone })).status).toBe(200);
  expect((await me({ cookie: tablet })).status).toBe(200);
  const r = await answerOf(() => adminUser.action(args(formRequest(`/admin/users/${u!.id}`, { intent: "revoke-sessions" }, { cookie: admin.cookie }), { userId: u!.id })));
  expect(r.status).toBe(302);
  for (const cookie of [phone, tablet]) {
    expect((await me({ cookie })).status).toBe(401);
  }
  // The admin's own session is untouched, and a page as the signed-out user goes to /login.
  expect((await me({ cookie: admin.cookie })).status).toBe(200);
  const page = await answerOf(() => adminLanding.loader(args(getRequest("/admin", { cookie: phone }))));
  expect(page.status).toBe(302);
  expect(page.location).toBe("/login?redirectTo=%2Fadmin");
});

test("deactivating a user stops their tokens and sessions; a token acts with the user's current role", async () => {
  const token = await makeToken("role follows the user");
  const cookie = (await createAuthSession({ id: pipelineUser.id, role: "qa" })).cookie.split(";")[0]!;
  const role = await answerOf(() => adminUser.action(args(formRequest(`/admin/users/${pipelineUser.id}`, { intent: "role", role: "viewer" }, { cookie: admin.cookie }), { userId: pipelineUser.id })));
  expect(role.status).toBe(302);
  expect(((await me({ bearer: token })).body as { role: string }).role).toBe("viewer");

  const off = await answerOf(() => adminUser.action(args(formRequest(`/admin/users/${pipelineUser.id}`, { intent: "deactivate" }, { cookie: admin.cookie }), { userId: pipelineUser.id })));
  expect(off.status).toBe(302);
  expect((await me({ bearer: token })).status).toBe(401);
  expect((await me({ cookie })).status).toBe(401);

  const on = await answerOf(() => adminUser.action(args(formRequest(`/admin/users/${pipelineUser.id}`, { intent: "reactivate" }, { cookie: admin.cookie }), { userId: pipelineUser.id })));
  expect(on.status).toBe(302);
  // Tokens come back with the account; sessions were revoked for good.
  expect((await me({ bearer: token })).status).toBe(200);
  expect((await me({ cookie })).status).toBe(401);

  const actions = (await getDb().select().from(auditLog).where(eq(auditLog.entityId, pipelineUser.id))).map((r) => r.action);
  expect(actions).toEqual(expect.arrayContaining(["user.role", "user.deactivate", "user.reactivate", "user.revoke-sessions"]));
});

test("a non-admin cannot create a token, even by posting the form directly (403 before validation)", async () => {
  const viewerCookie = (await createAuthSession({ id: pipelineUser.id, role: "viewer" })).cookie.split(";")[0]!;
  const a = await answerOf(() => adminTokens.action(args(formRequest("/admin/tokens", { intent: "create" }, { cookie: viewerCookie }))));
  expect(a.status).toBe(403);
  const none = await answerOf(() => adminTokens.action(args(formRequest("/admin/tokens", { intent: "create" }))));
  expect(none.status).toBe(302);
  expect(none.location).toMatch(/^\/login\?redirectTo=/);
});
