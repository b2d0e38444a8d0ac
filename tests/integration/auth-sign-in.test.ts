// Sign-in by e-mail code through the real actions and a real SMTP round trip to the local fake.
import { afterAll, beforeAll, expect, test, vi } from "vitest";
import { drainSignInMail } from "~/mail/mailer.server";
import { eq } from "drizzle-orm";
import { startFakeSmtp, type FakeSmtp } from "~/mail/fake-smtp.server";
import { resetEnvCache } from "~/env.server";
import { getDb } from "~/db/client.server";
import { auditLog, loginCodes, mailLog, users } from "~/db/schema";
import { resetSessionStorage, userFromCookie } from "~/auth/session.server";
import { RATE_LIMITS } from "~/auth/sign-in.server";
import * as login from "~/routes/login";
import * as loginCode from "~/routes/login.code";
import * as magic from "~/routes/auth.magic";
import * as logout from "~/routes/logout";
import { answerOf, args, errorText, formRequest, freePort, getRequest, Jar, mailsTo, tempMailDir } from "./auth-helpers";

let smtp: FakeSmtp;
let mailDir: string;

beforeAll(async () => {
  mailDir = tempMailDir("signin");
  smtp = await startFakeSmtp({ port: 0, mailDir });
  process.env.SMTP_URL = `smtp://127.0.0.1:${smtp.port}`;
  process.env.APP_URL = "http://shotbook.test";
  resetEnvCache();
  resetSessionStorage();
  await getDb()
    .insert(users)
    .values([
      { email: "ada.crew@fernhollow.test", name: "Ada Crew", role: "crew" },
      { email: "quinn.qa@fernhollow.test", name: "Quinn QA", role: "qa" },
      { email: "gone@fernhollow.test", name: "Gone", role: "viewer", active: false },
      ...Array.from({ length: 6 }, (_, i) => ({ email: `user${i}@fernhollow.test`, role: "viewer" as const })),
    ]);
});

afterAll(async () => {
  await smtp?.close();
});

let ipSeq = 0;
/** A fresh client address per flow, so the per-IP limit only bites where a test means it to. */
const nextIp = () => `203.0.113.${++ipSeq}`;

async function requestCode(email: string, jar = new Jar(), ip = nextIp()) {
  const a = await answerOf(() => login.action(args(formRequest("/login", { email, redirectTo: "/review" }, { cookie: jar.header(), ip }))));
  jar.take(a.setCookies);
  await drainSignInMail(); // the root middleware's job once the answer is ready
  return { a, jar, ip };
}

async function enterCode(code: string, jar: Jar, ip = nextIp()) {
  const a = await answerOf(() => loginCode.action(args(formRequest("/login/code", { code, redirectTo: "/review" }, { cookie: jar.header(), ip }))));
  jar.take(a.setCookies);
  return a;
}

function latestCode(email: string) {
  const mails = mailsTo(mailDir, email);
  const m = mails.at(-1);
  expect(m, `a mail to ${email}`).toBeTruthy();
  expect(m!.code).toMatch(/^\d{6}$/);
  return { code: m!.code!, mail: m!, count: mails.length };
}

test("a code goes out by real SMTP, and typing it signs in with a session cookie the guards accept", async () => {
  const { a, jar } = await requestCode("Ada.Crew@Fernhollow.test ");
  expect(a.status).toBe(302);
  expect(a.location).toBe("/login/code?redirectTo=%2Freview");
  expect(jar.has("_totp")).toBe(true);

  const { code, mail } = latestCode("ada.crew@fernhollow.test");
  expect(mail.subject).toContain(code);
  expect(mail.text).toContain("10 minutes");
  // The magic link points at APP_URL, not at the host the request came in by.
  expect(mail.text).toMatch(/http:\/\/shotbook\.test\/auth\/magic\?t=/);

  const page = await answerOf(() => loginCode.loader(args(getRequest("/login/code", { cookie: jar.header() }))));
  expect(page.status).toBe(200);
  expect((page.body as { email: string }).email).toBe("ada.crew@fernhollow.test");

  const done = await enterCode(code, jar);
  expect(done.status).toBe(302);
  expect(done.location).toBe("/review");
  const user = await userFromCookie(getRequest("/", { cookie: jar.header() }));
  expect(user).toMatchObject({ email: "ada.crew@fernhollow.test", role: "crew", via: "cookie" });

  const sessionCookie = done.setCookies.find((c) => c.startsWith("__shotbook="))!;
  expect(sessionCookie).toMatch(/HttpOnly/i);
  expect(sessionCookie).toMatch(/SameSite=Lax/i);
  // A crew sign-in lasts the field week (CREW_SESSION_DAYS, 14 by default).
  expect(sessionCookie).toMatch(new RegExp(`Max-Age=${14 * 86400}`));

  const [row] = await getDb().select().from(users).where(eq(users.email, "ada.crew@fernhollow.test"));
  expect(row!.lastSignInAt).not.toBeNull();
  const audits = await getDb().select().from(auditLog).where(eq(auditLog.action, "auth.sign-in"));
  expect(audits.some((r) => r.entityId === row!.id)).toBe(true);
  const sent = await getDb().select().from(mailLog).where(eq(mailLog.to, "ada.crew@fernhollow.test"));
  expect(sent.map((r) => [r.template, r.status, r.payload])).toEqual([["sign-in-code", "sent", null]]);
});

test("the code is stored only as a hash", async () => {
  const { code } = latestCode("ada.crew@fernhollow.test");
  const rows = await getDb().select().from(loginCodes).where(eq(loginCodes.email, "ada.crew@fernhollow.test"));
  expect(rows.length).toBeGreaterThan(0);
  for (const r of rows) {
    expect(r.codeHash).toMatch(/^[0-9a-f]{64}$/);
    expect(r.codeHash).not.toContain(code);
  }
});

test("a used code is refused when sent again, with a clear message", async () => {
  const { jar } = await requestCode("quinn.qa@fernhollow.test");
  const { code } = latestCode("quinn.qa@fernhollow.test");
  const before = jar.clone();
  expect((await enterCode(code, jar)).status).toBe(302);
  // The same browser state replayed (the old strategy cookie kept): the database refuses.
  const again = await enterCode(code, before);
  expect(again.status).toBe(410);
  expect(errorText(again.body)).toMatch(/already been used/);
  expect(before.has("__shotbook")).toBe(false);
});

test("an expired code is refused and says so", async () => {
  const { jar } = await requestCode("user0@fernhollow.test");
  const { code } = latestCode("user0@fernhollow.test");
  await getDb()
    .update(loginCodes)
    .set({ expiresAt: new Date(Date.now() - 1000).toISOString() })
    .where(eq(loginCodes.email, "user0@fernhollow.test"));
  const a = await enterCode(code, jar);
  expect(a.status).toBe(410);
  expect(errorText(a.body)).toMatch(/expired/);
  expect(jar.has("__shotbook")).toBe(false);
});

test("five wrong codes lock the code: even the right one is then refused", async () => {
  const { jar } = await requestCode("user1@fernhollow.test");
  const { code } = latestCode("user1@fernhollow.test");
  const wrong = code === "000000" ? "111111" : "000000";
  const messages: string[] = [];
  for (let i = 0; i < 5; i++) {
    const a = await enterCode(wrong, jar);
    messages.push(errorText(a.body));
  }
  expect(messages.slice(0, 4)).toEqual([4, 3, 2, 1].map((n) => expect.stringContaining(`${n} ${n === 1 ? "try" : "tries"} left`)));
  expect(messages[4]).toMatch(/Too many wrong tries/);
  const right = await enterCode(code, jar);
  expect(right.status).toBe(410);
  expect(errorText(right.body)).toMatch(/Too many wrong tries/);
  expect(jar.has("__shotbook")).toBe(false);
  // A new code works again.
  await requestCode("user1@fernhollow.test", jar);
  const fresh = latestCode("user1@fernhollow.test");
  expect((await enterCode(fresh.code, jar)).status).toBe(302);
});

test("code requests over the per-address limit are refused with a clear message, counted in the database", async () => {
  const email = "user2@fernhollow.test";
  for (let i = 0; i < RATE_LIMITS.perAddress.limit; i++) {
    expect((await requestCode(email)).a.status).toBe(302);
  }
  const over = await requestCode(email);
  expect(over.a.status).toBe(429);
  expect(errorText(over.a.body)).toMatch(/Too many code requests from this address\. Wait \d+ minutes?/);
  expect(mailsTo(mailDir, email)).toHaveLength(RATE_LIMITS.perAddress.limit);
  const rows = await getDb().$client.execute({ sql: "SELECT count FROM rate_limits WHERE key = ?", args: [`code-email:${email}`] });
  expect(Number(rows.rows[0]!.count)).toBe(RATE_LIMITS.perAddress.limit + 1);
});

test("code requests over the per-IP limit are refused, whatever the address", async () => {
  const ip = "198.51.100.77";
  for (let i = 0; i < RATE_LIMITS.perIp.limit; i++) {
    const a = await answerOf(() => login.action(args(formRequest("/login", { email: `nobody${i}@elsewhere.test` }, { ip, forwardedFor: `10.9.${i}.1` }))));
    expect(a.status).toBe(302);
  }
  const over = await answerOf(() => login.action(args(formRequest("/login", { email: "user3@fernhollow.test" }, { ip }))));
  expect(over.status).toBe(429);
  expect(errorText(over.body)).toMatch(/Too many code requests from this network/);
  expect(mailsTo(mailDir, "user3@fernhollow.test")).toHaveLength(0);
});

test("an unknown or deactivated address gets the same answer as a known one, and no mail", async () => {
  const known = await requestCode("user4@fernhollow.test");
  const unknown = await requestCode("stranger@elsewhere.test");
  const inactive = await requestCode("gone@fernhollow.test");
  const shape = (x: typeof known) => ({
    status: x.a.status,
    location: x.a.location,
    cookies: x.a.setCookies.map((c) => c.split("=")[0]).sort(),
  });
  expect(shape(unknown)).toEqual(shape(known));
  expect(shape(inactive)).toEqual(shape(known));
  expect(mailsTo(mailDir, "stranger@elsewhere.test")).toHaveLength(0);
  expect(mailsTo(mailDir, "gone@fernhollow.test")).toHaveLength(0);
  const logged = await getDb().select().from(mailLog).where(eq(mailLog.to, "stranger@elsewhere.test"));
  expect(logged).toHaveLength(0);
  // Typing a code answers like a wrong code for a known address.
  const k = await enterCode("123456", known.jar);
  const u = await enterCode("123456", unknown.jar);
  expect(u.status).toBe(k.status);
  expect(errorText(u.body)).toBe(errorText(k.body));
  expect(unknown.jar.has("__shotbook")).toBe(false);
});

test("the magic link signs in once, in the browser that asked; a second use is refused", async () => {
  const { jar } = await requestCode("user5@fernhollow.test");
  const { mail } = latestCode("user5@fernhollow.test");
  const link = mail.text.match(/http:\/\/shotbook\.test(\/auth\/magic\?t=\S+)/)![1]!;
  const before = jar.clone();

  const elsewhere = await answerOf(() => magic.loader(args(getRequest(link))));
  expect(elsewhere.status).toBe(200);
  expect((elsewhere.body as { error: string }).error).toMatch(/same browser/);

  const a = await answerOf(() => magic.loader(args(getRequest(link, { cookie: jar.header() }))));
  expect(a.status).toBe(302);
  expect(a.location).toBe("/review");
  jar.take(a.setCookies);
  expect(await userFromCookie(getRequest("/", { cookie: jar.header() }))).toMatchObject({ email: "user5@fernhollow.test" });

  const again = await answerOf(() => magic.loader(args(getRequest(link, { cookie: before.header() }))));
  expect((again.body as { error: string }).error).toMatch(/already been used/);

  const forged = await answerOf(() => magic.loader(args(getRequest("/auth/magic?t=abc.def.ghi.jkl.mno", { cookie: before.header() }))));
  expect((forged.body as { error: string }).error).toMatch(/damaged/);
});

test("sign-out revokes the server-side session: the same cookie no longer works", async () => {
  const { jar } = await requestCode("user4@fernhollow.test");
  const { code } = latestCode("user4@fernhollow.test");
  expect((await enterCode(code, jar)).status).toBe(302);
  const cookie = jar.header();
  expect(await userFromCookie(getRequest("/", { cookie }))).not.toBeNull();
  const out = await answerOf(() => logout.action(args(formRequest("/logout", {}, { cookie }))));
  expect(out.status).toBe(302);
  expect(await userFromCookie(getRequest("/", { cookie }))).toBeNull();
});

test("an invalid address is refused with a field message and the typed value kept", async () => {
  const a = await answerOf(() => login.action(args(formRequest("/login", { email: "not-an-address" }, { ip: nextIp() }))));
  expect(a.status).toBe(400);
  const result = (a.body as { result: { error: Record<string, string[]>; initialValue: Record<string, string> } }).result;
  expect(result.error.email![0]).toMatch(/does not look like an e-mail address/);
  expect(result.initialValue.email).toBe("not-an-address");
});

test("when the mail server is down, the answer is the same; the failure is logged without the code", async () => {
  process.env.SMTP_URL = `smtp://127.0.0.1:${await freePort()}`;
  resetEnvCache();
  const warn = vi.spyOn(console, "warn").mockImplementation(() => undefined);
  try {
    // The mail leaves after the answer (issue 11), so the answer cannot depend on it.
    const { a } = await requestCode("user5@fernhollow.test");
    expect(a.status).toBe(302);
    expect(a.location).toBe("/login/code?redirectTo=%2Freview");
    const [row] = await getDb()
      .select()
      .from(mailLog)
      .where(eq(mailLog.to, "user5@fernhollow.test"))
      .orderBy(mailLog.at)
      .then((r) => r.slice(-1));
    expect(row).toMatchObject({ template: "sign-in-code", status: "failed", payload: null, subject: "Your Shotbook sign-in code: (not stored)" });
    expect(row!.error).toBeTruthy();
  } finally {
    warn.mockRestore();
    process.env.SMTP_URL = `smtp://127.0.0.1:${smtp.port}`;
    resetEnvCache();
  }
});
