// Issue 11: the per-client sign-in limit keys on the socket's address, not on a header the
// client writes itself; X-Forwarded-For counts only as far as TRUST_PROXY says our own proxies
// appended to it. And wrong codes add up per address across codes, in the database.
import { afterAll, afterEach, beforeAll, expect, test } from "vitest";
import { eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { loginCodes, users } from "~/db/schema";
import { resetEnvCache } from "~/env.server";
import { resetSessionStorage } from "~/auth/session.server";
import { MAX_WRONG_CODES_PER_DAY } from "~/auth/login-codes.server";
import { RATE_LIMITS } from "~/auth/sign-in.server";
import { clientIp } from "~/http/client-address.server";
import { startFakeSmtp, type FakeSmtp } from "~/mail/fake-smtp.server";
import { drainSignInMail } from "~/mail/mailer.server";
import * as login from "~/routes/login";
import * as loginCode from "~/routes/login.code";
import { answerOf, args, errorText, formRequest, getRequest, Jar, mailsTo, tempMailDir } from "./auth-helpers";

let smtp: FakeSmtp;
let mailDir: string;

beforeAll(async () => {
  mailDir = tempMailDir("ratelimit");
  smtp = await startFakeSmtp({ port: 0, mailDir });
  process.env.SMTP_URL = `smtp://127.0.0.1:${smtp.port}`;
  resetEnvCache();
  resetSessionStorage();
  await getDb()
    .insert(users)
    .values([
      { email: "admin@fernhollow.test", name: "Admin", role: "admin" },
      { email: "ada.crew@fernhollow.test", name: "Ada Crew", role: "crew" },
    ]);
});

afterEach(() => {
  delete process.env.TRUST_PROXY;
  resetEnvCache();
});

afterAll(async () => {
  await smtp?.close();
});

const ask = (email: string, opts: { ip?: string; forwardedFor?: string }) => answerOf(() => login.action(args(formRequest("/login", { email }, opts))));

test("rotating X-Forwarded-For does not dodge the per-client limit: the socket address counts", async () => {
  const socket = "198.51.100.10";
  for (let i = 0; i < RATE_LIMITS.perIp.limit; i++) {
    expect((await ask(`nobody${i}@elsewhere.test`, { ip: socket, forwardedFor: `10.1.${i}.${i}` })).status).toBe(302);
  }
  const over = await ask("nobody-more@elsewhere.test", { ip: socket, forwardedFor: "10.200.200.200" });
  expect(over.status).toBe(429);
  expect(errorText(over.body)).toMatch(/from this network/);
});

test("one noisy client does not lock another out: each socket address has its own bucket", async () => {
  const attacker = "198.51.100.20";
  for (let i = 0; i <= RATE_LIMITS.perIp.limit; i++) await ask(`guess${i}@elsewhere.test`, { ip: attacker });
  expect((await ask("guess-more@elsewhere.test", { ip: attacker })).status).toBe(429);
  const admin = await ask("admin@fernhollow.test", { ip: "192.0.2.50" });
  expect(admin.status).toBe(302);
  await drainSignInMail();
  expect(mailsTo(mailDir, "admin@fernhollow.test")).toHaveLength(1);
});

test("TRUST_PROXY=n takes the address n hops from the right; the client's own entries are ignored", () => {
  const req = (xff?: string) => getRequest("/", { forwardedFor: xff });
  const ctx = (ip: string) => (args(formRequest("/", {}, { ip })) as { context: unknown }).context as Parameters<typeof clientIp>[1];
  // No proxy trusted: the socket, whatever the header says.
  expect(clientIp(req("6.6.6.6"), ctx("203.0.113.5"), 0)).toBe("203.0.113.5");
  expect(clientIp(req(), ctx("::ffff:203.0.113.5"), 0)).toBe("203.0.113.5");
  // One proxy (socket = the proxy): the entry it appended, not what the client wrote before it.
  expect(clientIp(req("6.6.6.6, 203.0.113.7"), ctx("10.0.0.2"), 1)).toBe("203.0.113.7");
  expect(clientIp(req("1.1.1.1, 2.2.2.2, 203.0.113.7"), ctx("10.0.0.2"), 1)).toBe("203.0.113.7");
  // Two proxies: CDN then a local balancer.
  expect(clientIp(req("6.6.6.6, 203.0.113.8, 172.16.0.9"), ctx("10.0.0.2"), 2)).toBe("203.0.113.8");
  // Fewer entries than hops: the leftmost there is.
  expect(clientIp(req(), ctx("10.0.0.2"), 1)).toBe("10.0.0.2");
  // Nothing known at all.
  expect(clientIp(req("6.6.6.6"), undefined, 0)).toBe("unknown");
});

test("behind one trusted proxy, rotating the client-written part of the header does not dodge the limit", async () => {
  process.env.TRUST_PROXY = "1";
  resetEnvCache();
  const proxy = "10.0.0.2";
  for (let i = 0; i < RATE_LIMITS.perIp.limit; i++) {
    expect((await ask(`proxied${i}@elsewhere.test`, { ip: proxy, forwardedFor: `6.6.${i}.6, 203.0.113.77` })).status).toBe(302);
  }
  expect((await ask("proxied-more@elsewhere.test", { ip: proxy, forwardedFor: "7.7.7.7, 203.0.113.77" })).status).toBe(429);
  // Another real client behind the same proxy is not affected.
  expect((await ask("proxied-other@elsewhere.test", { ip: proxy, forwardedFor: "203.0.113.78" })).status).toBe(302);
});

test("TRUST_PROXY is validated at boot", async () => {
  const { getEnv } = await import("~/env.server");
  process.env.TRUST_PROXY = "yes";
  resetEnvCache();
  expect(() => getEnv()).toThrow(/TRUST_PROXY/);
  process.env.TRUST_PROXY = "-1";
  resetEnvCache();
  expect(() => getEnv()).toThrow(/TRUST_PROXY is 0 or more/);
});

test(`${MAX_WRONG_CODES_PER_DAY} wrong codes across several codes pause code sign-in for the address, even with the right code`, async () => {
  const email = "ada.crew@fernhollow.test";
  const jar = new Jar();
  let ip = 0;
  const request = async () => {
    const a = await answerOf(() => login.action(args(formRequest("/login", { email }, { cookie: jar.header(), ip: `192.0.2.${100 + ++ip}` }))));
    jar.take(a.setCookies);
    await drainSignInMail();
    return mailsTo(mailDir, email).at(-1)!.code!;
  };
  const enter = async (code: string) => {
    const a = await answerOf(() => loginCode.action(args(formRequest("/login/code", { code }, { cookie: jar.header(), ip: `192.0.2.${100 + ++ip}` }))));
    jar.take(a.setCookies);
    return a;
  };
  // Four codes, five wrong tries each (the most one code allows).
  for (let c = 0; c < MAX_WRONG_CODES_PER_DAY / 5; c++) {
    const code = await request();
    const wrong = code === "000000" ? "111111" : "000000";
    for (let t = 0; t < 5; t++) expect((await enter(wrong)).status).not.toBe(302);
  }
  const fresh = await request();
  const refused = await enter(fresh);
  expect(refused.status).toBe(429);
  expect(errorText(refused.body)).toMatch(/Too many wrong codes for this address in the last 24 hours \(20\)\. .*paused for it until \d{4}-\d{2}-\d{2} \d{2}:\d{2} UTC/);
  expect(jar.has("__shotbook")).toBe(false);

  // The count lives in login_codes (shared by every instance): once the tries are a day old,
  // the address may sign in again.
  const dayAgo = new Date(Date.now() - 86400_000 - 60_000).toISOString();
  const rows = await getDb().select().from(loginCodes).where(eq(loginCodes.email, email));
  for (const r of rows) if (r.attempts > 0) await getDb().update(loginCodes).set({ createdAt: dayAgo }).where(eq(loginCodes.id, r.id));
  expect((await enter(fresh)).status).toBe(302);
  expect(jar.has("__shotbook")).toBe(true);
});
