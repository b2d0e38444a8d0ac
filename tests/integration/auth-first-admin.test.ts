// An empty installation: the very first sign-in makes its admin, and only that one.
import { afterAll, beforeAll, expect, test } from "vitest";
import { drainSignInMail } from "~/mail/mailer.server";
import { startFakeSmtp, type FakeSmtp } from "~/mail/fake-smtp.server";
import { resetEnvCache } from "~/env.server";
import { getDb } from "~/db/client.server";
import { users } from "~/db/schema";
import { userFromCookie } from "~/auth/session.server";
import { createFirstAdmin } from "~/models/users.server";
import * as login from "~/routes/login";
import * as loginCode from "~/routes/login.code";
import { answerOf, args, formRequest, getRequest, Jar, mailsTo, tempMailDir } from "./auth-helpers";

let smtp: FakeSmtp;
let mailDir: string;

beforeAll(async () => {
  mailDir = tempMailDir("first");
  smtp = await startFakeSmtp({ port: 0, mailDir });
  process.env.SMTP_URL = `smtp://127.0.0.1:${smtp.port}`;
  resetEnvCache();
});

afterAll(async () => {
  await smtp?.close();
});

async function signIn(email: string, ip: string) {
  const jar = new Jar();
  jar.take((await answerOf(() => login.action(args(formRequest("/login", { email }, { ip }))))).setCookies);
  await drainSignInMail(); // the root middleware's job once the answer is ready
  const code = mailsTo(mailDir, email).at(-1)?.code;
  if (!code) return { jar, mailed: false };
  jar.take((await answerOf(() => loginCode.action(args(formRequest("/login/code", { code }, { cookie: jar.header(), ip }))))).setCookies);
  return { jar, mailed: true };
}

test("with no users at all, the first address to sign in gets a code and becomes the admin", async () => {
  expect(await getDb().select().from(users)).toHaveLength(0);
  const first = await signIn("founder@fernhollow.test", "192.0.2.1");
  expect(first.mailed).toBe(true);
  const user = await userFromCookie(getRequest("/", { cookie: first.jar.header() }));
  expect(user).toMatchObject({ email: "founder@fernhollow.test", role: "admin" });
});

test("once there is a user, another uninvited address gets no code and no account", async () => {
  const second = await signIn("walk-in@fernhollow.test", "192.0.2.2");
  expect(second.mailed).toBe(false);
  const rows = await getDb().select({ email: users.email, role: users.role }).from(users);
  expect(rows).toEqual([{ email: "founder@fernhollow.test", role: "admin" }]);
  // Racing first sign-ins cannot make a second admin either: the insert checks emptiness itself.
  expect(await createFirstAdmin("late-racer@fernhollow.test")).toBeNull();
});
