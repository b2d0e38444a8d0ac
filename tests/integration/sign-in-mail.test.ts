// Issue 11: asking for a sign-in code must not tell, by its timing, whether an address has an
// account — so the code mail leaves after the answer, for every address the same way — and no
// sign-in code may rest in the database in clear (mail_log kept it in the subject).
import { afterAll, beforeAll, expect, test, vi } from "vitest";
import { eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { mailLog, users } from "~/db/schema";
import { resetEnvCache } from "~/env.server";
import { resetSessionStorage, userFromCookie } from "~/auth/session.server";
import { startFakeSmtp, type FakeSmtp } from "~/mail/fake-smtp.server";
import { drainSignInMail, getTransport, queuedSignInMails } from "~/mail/mailer.server";
import * as login from "~/routes/login";
import * as loginCode from "~/routes/login.code";
import { answerOf, args, formRequest, getRequest, Jar, mailsTo, tempMailDir } from "./auth-helpers";

let smtp: FakeSmtp;
let mailDir: string;

beforeAll(async () => {
  mailDir = tempMailDir("deferred");
  smtp = await startFakeSmtp({ port: 0, mailDir });
  process.env.SMTP_URL = `smtp://127.0.0.1:${smtp.port}`;
  resetEnvCache();
  resetSessionStorage();
  await getDb()
    .insert(users)
    .values([
      { email: "quinn.qa@fernhollow.test", name: "Quinn QA", role: "qa" },
      { email: "ada.crew@fernhollow.test", name: "Ada Crew", role: "crew" },
    ]);
});

afterAll(async () => {
  vi.restoreAllMocks();
  await smtp?.close();
});

async function ask(email: string, ip: string) {
  const a = await answerOf(() => login.action(args(formRequest("/login", { email }, { ip }))));
  return { status: a.status, location: a.location, cookies: a.setCookies.map((c) => c.split("=")[0]).sort(), jar: new Jar().take(a.setCookies) };
}

test("the sign-in action answers before any mail is sent, alike for a known and an unknown address", async () => {
  const send = vi.spyOn(getTransport(), "sendMail").mockImplementation((async () => ({ messageId: "<test@shotbook>" })) as never);
  try {
    const known = await ask("quinn.qa@fernhollow.test", "192.0.2.21");
    expect(send).not.toHaveBeenCalled();
    const unknown = await ask("stranger@elsewhere.test", "192.0.2.22");
    expect(send).not.toHaveBeenCalled();
    const { jar: _k, ...knownShape } = known;
    const { jar: _u, ...unknownShape } = unknown;
    expect(unknownShape).toEqual(knownShape);

    // What the root middleware does once the answer is ready: only the real account gets mail.
    expect(queuedSignInMails()).toBe(1);
    await drainSignInMail();
    expect(send).toHaveBeenCalledTimes(1);
    expect((send.mock.calls[0]![0] as { to: string }).to).toBe("quinn.qa@fernhollow.test");
    expect(queuedSignInMails()).toBe(0);
  } finally {
    send.mockRestore();
  }
});

/** Every text value in every table of the database, with where it was found. */
async function everyTextValue() {
  const client = getDb().$client;
  const tables = await client.execute("SELECT name FROM sqlite_master WHERE type = 'table'");
  const out: { where: string; value: string }[] = [];
  for (const t of tables.rows) {
    const name = String(t.name);
    const rows = await client.execute(`SELECT * FROM "${name.replace(/"/g, '""')}"`);
    for (const row of rows.rows) {
      for (const col of rows.columns) {
        const v = row[col];
        if (typeof v === "string") out.push({ where: `${name}.${col}`, value: v });
      }
    }
  }
  return out;
}

test("after a sign-in, no row of any table holds the code in clear (mail_log keeps a redacted subject)", async () => {
  const email = "ada.crew@fernhollow.test";
  const { jar } = await ask(email, "192.0.2.23");
  await drainSignInMail();
  const code = mailsTo(mailDir, email).at(-1)!.code!;
  expect(code).toMatch(/^\d{6}$/);
  const done = await answerOf(() => loginCode.action(args(formRequest("/login/code", { code }, { cookie: jar.header(), ip: "192.0.2.23" }))));
  jar.take(done.setCookies);
  expect(await userFromCookie(getRequest("/", { cookie: jar.header() }))).toMatchObject({ email });

  const [logged] = await getDb().select().from(mailLog).where(eq(mailLog.to, email));
  expect(logged).toMatchObject({ template: "sign-in-code", status: "sent", payload: null });
  expect(logged!.subject).not.toContain(code);

  const values = await everyTextValue();
  expect(values.some((v) => v.where === "login_codes.code_hash")).toBe(true);
  expect(values.filter((v) => v.value.includes(code)).map((v) => v.where)).toEqual([]);
});
