// issue 15: the admins get one mail per certificate 30 days before it falls due, through the
// ordinary mail path (mail_log), never twice — checked through the real fake SMTP.
import { afterAll, beforeAll, expect, test } from "vitest";
import { eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { mailLog } from "~/db/schema";
import { resetEnvCache } from "~/env.server";
import { startFakeSmtp, type FakeSmtp } from "~/mail/fake-smtp.server";
import { notifyCertificatesDue } from "~/models/certificates.server";
import { createEdm } from "~/models/edms.server";
import { makeSensor, makeTape, makeUser } from "../support/registry-fixtures";
import { mailsTo, tempMailDir } from "./auth-helpers";

let smtp: FakeSmtp;
let mailDir: string;

beforeAll(async () => {
  mailDir = tempMailDir("certificates");
  smtp = await startFakeSmtp({ port: 0, mailDir });
  process.env.SMTP_URL = `smtp://127.0.0.1:${smtp.port}`;
  process.env.MAIL_DIR = mailDir;
  resetEnvCache();
});
afterAll(async () => {
  await smtp?.close();
});

test("certificates due within 30 days are mailed to the admins once each; later ones wait", async () => {
  const admin = await makeUser("admin", "cert-admin@fixture.test");
  await makeUser("qa", "cert-qa@fixture.test");
  const today = "2026-06-01";
  // 2026-06-01 + 30 days = 2026-07-01 (hand count: June has 30 days)
  await makeSensor({ label: "Roof scanner R7", certNumber: "S-1", certLaboratory: "Lab A", certIssued: "2025-07-01", certDue: "2026-07-01" }); // 30 days: due now
  await makeSensor({ label: "Roof scanner R8", certNumber: "S-2", certLaboratory: "Lab A", certIssued: "2025-07-02", certDue: "2026-07-02" }); // 31 days: not yet
  await makeTape({ label: "Steel tape 50 m", certNumber: "T-9", certLaboratory: "Tape lab", certIssued: "2025-06-10", certDue: "2026-06-10" }); // 9 days
  const edm = await createEdm("system", {
    label: "Total station TS-5",
    serial: "TS5-1",
    uncertaintyMm: 1,
    uncertaintyPpm: 1.5,
    certificate: { number: "E-5", laboratory: "Survey lab", issued: "2025-01-01", due: "2026-05-20" },
  }); // past due
  expect(edm.status).toBe(201);

  const first = await notifyCertificatesDue({ today });
  const sentNow = first.sent.map((c) => `${c.kind}:${c.number}:${c.days}`);
  expect(sentNow).toContain("sensor:S-1:30");
  expect(sentNow).toContain("tape:T-9:9");
  expect(sentNow).toContain("edm:E-5:-12");
  expect(sentNow.some((x) => x.startsWith("sensor:S-2"))).toBe(false);
  const mine = mailsTo(mailDir, admin.email).filter((m) => /Calibration certificate falls due/.test(m.subject));
  expect(mine.map((m) => m.subject).sort()).toEqual([
    "Calibration certificate falls due: reference EDM Total station TS-5",
    "Calibration certificate falls due: sensor Roof scanner R7",
    "Calibration certificate falls due: tape Steel tape 50 m",
  ]);
  expect(mine.find((m) => /R7/.test(m.subject))!.text).toContain("S-1 (Lab A) falls due on 2026-07-01, in 30 days");
  expect(mailsTo(mailDir, "cert-qa@fixture.test").filter((m) => /certificate/i.test(m.subject))).toEqual([]); // admins only
  // recorded in the mail log
  const logged = await getDb().select().from(mailLog).where(eq(mailLog.template, "certificate-due"));
  expect(logged.filter((l) => l.to === admin.email && l.status === "sent").length).toBeGreaterThanOrEqual(3);

  // again: nothing new (once per certificate)
  expect((await notifyCertificatesDue({ today })).sent).toEqual([]);
  // the next day the 31-day one enters the window
  expect((await notifyCertificatesDue({ today: "2026-06-02" })).sent.map((c) => c.number)).toEqual(["S-2"]);
});
