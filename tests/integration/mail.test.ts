// Mail through the real fake SMTP: the four templates, mail_log, failure without throwing,
// retry with backoff, and the development mail viewer at /dev/mail.
import { afterAll, beforeAll, expect, test } from "vitest";
import { eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { mailLog } from "~/db/schema";
import { resetEnvCache } from "~/env.server";
import { startFakeSmtp, type FakeSmtp } from "~/mail/fake-smtp.server";
import { MAX_MAIL_ATTEMPTS, retryDelayMs, retryMails, sendTemplateMail } from "~/mail/mailer.server";
import { parseEml } from "~/mail/eml.server";
import { renderMail, TEMPLATES } from "~/mail/templates.server";
import * as devMail from "~/routes/dev.mail";
import { answerOf, freePort, mailsTo, tempMailDir } from "./auth-helpers";

let smtp: FakeSmtp;
let mailDir: string;
let smtpUrl: string;

beforeAll(async () => {
  mailDir = tempMailDir("mail");
  smtp = await startFakeSmtp({ port: 0, mailDir });
  smtpUrl = `smtp://127.0.0.1:${smtp.port}`;
  process.env.SMTP_URL = smtpUrl;
  process.env.MAIL_DIR = mailDir;
  process.env.APP_URL = "http://shotbook.test";
  resetEnvCache();
});

afterAll(async () => {
  await smtp?.close();
});

function smtpDown(port: number) {
  process.env.SMTP_URL = `smtp://127.0.0.1:${port}`;
  resetEnvCache();
}
function smtpUp() {
  process.env.SMTP_URL = smtpUrl;
  resetEnvCache();
}

test("every template has a subject, a text body and an HTML body, with values filled in and HTML escaped", () => {
  const vars = {
    code: "482913",
    magicLink: "http://shotbook.test/auth/magic?t=x",
    minutes: 10,
    name: "Mira <Field>",
    role: "crew",
    inviterName: "Rowan Admin",
    sensorLabel: "Roof scanner FG-R1",
    sensorId: "s-1",
    biasMm: 7.25,
    rmseMm: 9.5,
    withinPct: 81.3,
    decision: "approved",
    byName: "Quinn QA",
    note: "Bias & spread within spec",
  };
  for (const t of TEMPLATES) {
    const m = renderMail(t, vars);
    expect(m.subject.length, t).toBeGreaterThan(5);
    expect(m.text, t).not.toMatch(/undefined|null|NaN|\[object/);
    expect(m.html, t).toMatch(/^<!doctype html>/);
  }
  expect(renderMail("sign-in-code", vars).text).toContain("482913");
  expect(renderMail("invitation", vars).html).toContain("Mira &lt;Field&gt;");
  expect(renderMail("invitation", vars).html).not.toContain("<Field>");
  const failed = renderMail("sensor-failed", vars);
  expect(failed.subject).toBe("Sensor failed its range check: Roof scanner FG-R1");
  expect(failed.text).toContain("Bias 7.3 mm, RMSE 9.5 mm, within tolerance 81.3 %");
  expect(failed.text).toContain("http://shotbook.test/review/sensors/s-1");
  expect(renderMail("sensor-signed-off", vars).text).toContain("Quinn QA has signed off (approved) Roof scanner FG-R1");
  expect(renderMail("sensor-signed-off", { ...vars, decision: "rejected" }).subject).toBe("Sensor rejected: Roof scanner FG-R1");
  // Missing values fall back to words, never "undefined".
  expect(renderMail("sensor-failed", {}).text).toMatch(/^A sensor did not pass/);
});

test("sendTemplateMail sends one message per recipient through SMTP and logs each in mail_log", async () => {
  const r = await sendTemplateMail("sensor-signed-off", ["qa1@fernhollow.test", "crew1@fernhollow.test", "qa1@fernhollow.test"], {
    sensorLabel: "Tripod scanner FG-T2",
    decision: "approved",
    byName: "Quinn QA",
  });
  expect(r).toEqual({ ok: true });
  for (const to of ["qa1@fernhollow.test", "crew1@fernhollow.test"]) {
    const mails = mailsTo(mailDir, to);
    expect(mails).toHaveLength(1);
    expect(mails[0]!.to).toBe(to);
    expect(mails[0]!.subject).toBe("Sensor signed off: Tripod scanner FG-T2");
    expect(mails[0]!.html).toContain("<strong>Tripod scanner FG-T2</strong>");
    const rows = await getDb().select().from(mailLog).where(eq(mailLog.to, to));
    expect(rows).toHaveLength(1);
    expect(rows[0]).toMatchObject({ template: "sensor-signed-off", status: "sent", attempts: 1 });
    expect(rows[0]!.messageId).toBeTruthy();
  }
  expect(await sendTemplateMail("sensor-failed", [], {})).toEqual({ ok: true });
});

test("with the mail server down, sendTemplateMail does not throw; the mail is retried with backoff and then sent", async () => {
  smtpDown(await freePort());
  const r = await sendTemplateMail("sensor-failed", "late@fernhollow.test", { sensorLabel: "Depth camera FG-C3" });
  expect(r.ok).toBe(false);
  expect(r.error).toMatch(/late@fernhollow\.test/);
  const [row] = await getDb().select().from(mailLog).where(eq(mailLog.to, "late@fernhollow.test"));
  expect(row).toMatchObject({ status: "failed", attempts: 1 });
  expect((row!.payload as { subject: string }).subject).toBe("Sensor failed its range check: Depth camera FG-C3");

  // Still down, backoff passed: one more failed attempt is counted.
  const t1 = Date.now() + retryDelayMs(1) + 1000;
  expect(await retryMails({ now: new Date(t1) })).toEqual({ sent: 0, failed: 1 });
  const [second] = await getDb().select().from(mailLog).where(eq(mailLog.id, row!.id));
  expect(second).toMatchObject({ status: "failed", attempts: 2 });

  smtpUp();
  // Too early for attempt 3 (backoff after 2 attempts is 2 minutes): nothing is sent.
  expect(await retryMails({ now: new Date(t1 + 30_000) })).toEqual({ sent: 0, failed: 0 });
  expect(mailsTo(mailDir, "late@fernhollow.test")).toHaveLength(0);
  expect(await retryMails({ now: new Date(t1 + retryDelayMs(2) + 1000) })).toEqual({ sent: 1, failed: 0 });
  const [sent] = await getDb().select().from(mailLog).where(eq(mailLog.id, row!.id));
  expect(sent).toMatchObject({ status: "sent", attempts: 3, error: null });
  const mails = mailsTo(mailDir, "late@fernhollow.test");
  expect(mails).toHaveLength(1);
  expect(mails[0]!.subject).toBe("Sensor failed its range check: Depth camera FG-C3");
  // Sent once only: another round finds nothing.
  expect(await retryMails({ now: new Date(t1 + 3600_000) })).toEqual({ sent: 0, failed: 0 });
});

test("a mail that keeps failing stops after the last attempt", async () => {
  smtpDown(await freePort());
  try {
    await sendTemplateMail("invitation", "never@fernhollow.test", { role: "viewer" });
    let t = Date.now();
    for (let i = 1; i < MAX_MAIL_ATTEMPTS + 2; i++) {
      t += retryDelayMs(i) + 1000;
      await retryMails({ now: new Date(t) });
    }
    const [row] = await getDb().select().from(mailLog).where(eq(mailLog.to, "never@fernhollow.test"));
    expect(row).toMatchObject({ status: "failed", attempts: MAX_MAIL_ATTEMPTS });
  } finally {
    smtpUp();
  }
});

test("sendTemplateMail retries earlier failures when it next reaches the mail server", async () => {
  smtpDown(await freePort());
  await sendTemplateMail("invitation", "queued@fernhollow.test", { role: "qa" });
  smtpUp();
  // Make the backoff pass by dating the last attempt back.
  const [row] = await getDb().select().from(mailLog).where(eq(mailLog.to, "queued@fernhollow.test"));
  await getDb()
    .update(mailLog)
    .set({ payload: { ...(row!.payload as object), lastAttemptAt: new Date(Date.now() - 3600_000).toISOString() } })
    .where(eq(mailLog.id, row!.id));
  expect((await sendTemplateMail("invitation", "fresh@fernhollow.test", { role: "crew" })).ok).toBe(true);
  expect(mailsTo(mailDir, "queued@fernhollow.test")).toHaveLength(1);
});

test("the .eml reader decodes encoded subjects and quoted-printable bodies", () => {
  const raw = [
    "From: Shotbook <no-reply@shotbook.invalid>",
    "To: a@b.test",
    "Subject: =?UTF-8?Q?Sensor_failed:_Caf=C3=A9?= =?UTF-8?Q?_=E2=9C=97?=",
    "Date: Mon, 04 May 2026 08:10:00 +0200",
    'Content-Type: multipart/alternative; boundary="--_b1"',
    "",
    "----_b1",
    "Content-Type: text/plain; charset=utf-8",
    "Content-Transfer-Encoding: quoted-printable",
    "",
    "Bias 7.3=C2=A0mm and a long line that wraps=",
    " here",
    "----_b1",
    "Content-Type: text/html; charset=utf-8",
    "Content-Transfer-Encoding: base64",
    "",
    Buffer.from("<p>ok</p>").toString("base64"),
    "----_b1--",
  ].join("\r\n");
  const m = parseEml(raw);
  expect(m.subject).toBe("Sensor failed: Café ✗");
  expect(m.text).toBe("Bias 7.3\u00a0mm and a long line that wraps here");
  expect(m.html).toBe("<p>ok</p>");
  expect(m.date).toBe("2026-05-04T06:10:00.000Z");
});

test("/dev/mail is 404 unless enabled; enabled, it lists messages newest first with the sign-in code", async () => {
  const off = await answerOf(() => devMail.loader());
  expect(off.status).toBe(404);

  process.env.DEV_MAIL_VIEWER = "true";
  resetEnvCache();
  try {
    await new Promise((r) => setTimeout(r, 20));
    await sendTemplateMail("sign-in-code", "viewer@fernhollow.test", { code: "305118", minutes: 10 });
    const on = await answerOf(() => devMail.loader());
    expect(on.status).toBe(200);
    const { mails } = on.body as { mails: { subject: string; to: string; code: string | null; text: string; date: string }[] };
    expect(mails.length).toBeGreaterThan(3);
    expect(mails[0]).toMatchObject({ to: "viewer@fernhollow.test", code: "305118", subject: "Your Shotbook sign-in code: 305118" });
    expect(mails[0]!.text).toContain("305118");
    const times = mails.map((m) => Date.parse(m.date));
    expect([...times].sort((a, b) => b - a)).toEqual(times);
    expect(mails.filter((m) => m.code).map((m) => m.to)).toEqual(["viewer@fernhollow.test"]);
  } finally {
    delete process.env.DEV_MAIL_VIEWER;
    resetEnvCache();
  }
});
