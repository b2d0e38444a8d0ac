// The admin's user screens through their real loaders/actions: invite (with its e-mail), role
// changes, the last-admin guard, and the audit trail; the invited person can then sign in.
import { afterAll, beforeAll, expect, test } from "vitest";
import { drainSignInMail } from "~/mail/mailer.server";
import { and, eq } from "drizzle-orm";
import { createAuthSession, userFromCookie } from "~/auth/session.server";
import { getDb } from "~/db/client.server";
import { auditLog, mailLog, users } from "~/db/schema";
import { resetEnvCache } from "~/env.server";
import { startFakeSmtp, type FakeSmtp } from "~/mail/fake-smtp.server";
import { listUserEmailsByRole } from "~/models/users.server";
import * as adminUsers from "~/routes/admin.users";
import * as adminUser from "~/routes/admin.users.$userId";
import * as login from "~/routes/login";
import * as loginCode from "~/routes/login.code";
import { answerOf, args, errorText, formRequest, getRequest, Jar, mailsTo, tempMailDir } from "./auth-helpers";

let smtp: FakeSmtp;
let mailDir: string;
let admin: { id: string; cookie: string };

beforeAll(async () => {
  mailDir = tempMailDir("admin");
  smtp = await startFakeSmtp({ port: 0, mailDir });
  process.env.SMTP_URL = `smtp://127.0.0.1:${smtp.port}`;
  resetEnvCache();
  const [a] = await getDb().insert(users).values({ email: "rowan@fernhollow.test", name: "Rowan Admin", role: "admin" }).returning();
  admin = { id: a!.id, cookie: (await createAuthSession(a!)).cookie.split(";")[0]! };
});

afterAll(async () => {
  await smtp?.close();
});

const post = (fields: Record<string, string>, cookie = admin.cookie) => answerOf(() => adminUsers.action(args(formRequest("/admin/users", fields, { cookie }))));
const postUser = (id: string, fields: Record<string, string>) => answerOf(() => adminUser.action(args(formRequest(`/admin/users/${id}`, fields, { cookie: admin.cookie }), { userId: id })));

test("inviting sends the invitation e-mail, adds the user and writes the audit trail; the list shows them", async () => {
  const a = await post({ email: "Mira.Field@Fernhollow.test", name: "Mira Field", role: "crew" });
  expect(a.status).toBe(302);
  const jar = new Jar().take(a.setCookies);
  const [u] = await getDb().select().from(users).where(eq(users.email, "mira.field@fernhollow.test"));
  expect(u).toMatchObject({ name: "Mira Field", role: "crew", active: true, invitedBy: admin.id });
  const mails = mailsTo(mailDir, "mira.field@fernhollow.test");
  expect(mails).toHaveLength(1);
  expect(mails[0]!.subject).toBe("You are invited to Shotbook (crew)");
  expect(mails[0]!.text).toContain("Rowan Admin has invited you");
  expect(mails[0]!.text).toMatch(/\/login/);
  const [log] = await getDb().select().from(mailLog).where(eq(mailLog.to, "mira.field@fernhollow.test"));
  expect(log).toMatchObject({ template: "invitation", status: "sent" });
  const audit = await getDb()
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.action, "user.invite"), eq(auditLog.entityId, u!.id)));
  expect(audit[0]).toMatchObject({ actorUserId: admin.id, detail: { email: "mira.field@fernhollow.test", role: "crew", name: "Mira Field" } });

  // The redirect carries the flash message to the list.
  const list = await answerOf(() => adminUsers.loader(args(getRequest("/admin/users", { cookie: `${admin.cookie}; ${jar.header()}` }))));
  const body = list.body as { users: { email: string; activeSessions: number }[]; flash: { text: string } };
  expect(body.flash.text).toBe("Invitation sent to mira.field@fernhollow.test.");
  // The admin has the one session minted above; the invited person has none yet.
  expect(body.users.map((x) => [x.email, x.activeSessions])).toEqual([
    ["mira.field@fernhollow.test", 0],
    ["rowan@fernhollow.test", 1],
  ]);
});

test("the invited person can sign in with a code", async () => {
  const jar = new Jar();
  const a = await answerOf(() => login.action(args(formRequest("/login", { email: "mira.field@fernhollow.test" }, { ip: "192.0.2.10" }))));
  jar.take(a.setCookies);
  await drainSignInMail(); // the root middleware's job once the answer is ready
  const code = mailsTo(mailDir, "mira.field@fernhollow.test").at(-1)!.code!;
  const b = await answerOf(() => loginCode.action(args(formRequest("/login/code", { code }, { cookie: jar.header(), ip: "192.0.2.10" }))));
  jar.take(b.setCookies);
  expect(await userFromCookie(getRequest("/", { cookie: jar.header() }))).toMatchObject({ email: "mira.field@fernhollow.test", role: "crew" });
});

test("inviting an address twice, or with a bad role, is refused with field messages and the typed values kept", async () => {
  const dup = await post({ email: "mira.field@fernhollow.test", name: "Again", role: "qa" });
  expect(dup.status).toBe(400);
  expect(errorText(dup.body)).toMatch(/already exists/);
  const bad = await post({ email: "someone@fernhollow.test", name: "Sam", role: "owner" });
  expect(bad.status).toBe(400);
  const result = (bad.body as { result: { initialValue: Record<string, string> } }).result;
  expect(result.initialValue).toMatchObject({ email: "someone@fernhollow.test", name: "Sam" });
  expect(mailsTo(mailDir, "someone@fernhollow.test")).toHaveLength(0);
});

test("role changes are audited, listUserEmailsByRole follows them, and the last admin cannot be demoted or deactivated", async () => {
  const [u] = await getDb().select().from(users).where(eq(users.email, "mira.field@fernhollow.test"));
  expect(await listUserEmailsByRole(["crew"])).toContain("mira.field@fernhollow.test");
  expect((await postUser(u!.id, { intent: "role", role: "qa" })).status).toBe(302);
  expect(await listUserEmailsByRole(["crew"])).not.toContain("mira.field@fernhollow.test");
  expect(await listUserEmailsByRole(["qa", "admin"])).toEqual(["mira.field@fernhollow.test", "rowan@fernhollow.test"]);
  const audit = await getDb()
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.action, "user.role"), eq(auditLog.entityId, u!.id)));
  expect(audit[0]!.detail).toEqual({ from: "crew", to: "qa" });

  const demote = await postUser(admin.id, { intent: "role", role: "viewer" });
  expect(demote.status).toBe(400);
  expect((demote.body as { error: string }).error).toMatch(/last active admin/);
  const self = await postUser(admin.id, { intent: "deactivate" });
  expect(self.status).toBe(400);
  const [still] = await getDb().select().from(users).where(eq(users.id, admin.id));
  expect(still).toMatchObject({ role: "admin", active: true });

  // Deactivated users drop out of the notice lists.
  expect((await postUser(u!.id, { intent: "deactivate" })).status).toBe(302);
  expect(await listUserEmailsByRole(["qa"])).toEqual([]);
});

test("a made-up user id answers 404 to the admin", async () => {
  const id = "00000000-0000-4000-8000-000000000000";
  const page = await answerOf(() => adminUser.loader(args(getRequest(`/admin/users/${id}`, { cookie: admin.cookie }), { userId: id })));
  expect(page.status).toBe(404);
  expect((await postUser(id, { intent: "role", role: "qa" })).status).toBe(404);
});

test("an invitation whose e-mail cannot be sent still adds the user and says the mail will be retried", async () => {
  process.env.SMTP_URL = "smtp://127.0.0.1:9";
  resetEnvCache();
  try {
    const a = await post({ email: "late.mail@fernhollow.test", name: "", role: "viewer" });
    expect(a.status).toBe(302);
    const list = await answerOf(() => adminUsers.loader(args(getRequest("/admin/users", { cookie: `${admin.cookie}; ${new Jar().take(a.setCookies).header()}` }))));
    expect((list.body as { flash: { kind: string; text: string } }).flash).toMatchObject({ kind: "warn", text: expect.stringContaining("will be retried") });
    const [log] = await getDb().select().from(mailLog).where(eq(mailLog.to, "late.mail@fernhollow.test"));
    expect(log).toMatchObject({ template: "invitation", status: "failed", attempts: 1 });
  } finally {
    process.env.SMTP_URL = `smtp://127.0.0.1:${smtp.port}`;
    resetEnvCache();
  }
});
