// Sign-off through the real page action: validation, the report frozen into sign_offs.snapshot,
// the audit row, and the e-mail to the crew who synced the shots and to the admins, received
// by the local SMTP fake as .eml files. Also the failed-verdict notice to QA after a sync.
import { afterAll, beforeAll, expect, test } from "vitest";
import { and, eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { auditLog, signOffs } from "~/db/schema";
import { startFakeSmtp, type FakeSmtp } from "~/mail/fake-smtp.server";
import { resetEnvCache } from "~/env.server";
import * as sensorPage from "~/routes/review.sensors.$sensorId";
import * as exclusionApi from "~/routes/api.shots.$shotId.exclusion";
import { buildSensorReport } from "~/models/reports.server";
import { notifyFailedVerdicts } from "~/models/signoffs.server";
import { answerOf, args, mailsTo, tempMailDir } from "./auth-helpers";
import { addMemberUsers, apiRequest, call, makeUser } from "../support/registry-fixtures";
import { reviewWorld, type ReviewWorld } from "../support/review-fixtures";

let smtp: FakeSmtp;
let mailDir: string;
let w: ReviewWorld;

beforeAll(async () => {
  mailDir = tempMailDir("signoff");
  smtp = await startFakeSmtp({ port: 0, mailDir });
  process.env.SMTP_URL = `smtp://127.0.0.1:${smtp.port}`;
  process.env.APP_URL = "http://shotbook.test";
  resetEnvCache();
  w = await reviewWorld();
});

afterAll(async () => {
  await smtp?.close();
});

function signOff(user: { token: string }, sensorId: string, fields: Record<string, string>) {
  const request = new Request(`http://localhost/review/sensors/${sensorId}`, {
    method: "POST",
    headers: { Authorization: `Bearer ${user.token}`, "Content-Type": "application/x-www-form-urlencoded" },
    body: new URLSearchParams({ intent: "sign-off", ...fields }),
  });
  return answerOf(() => sensorPage.action(args(request, { sensorId })));
}

type Reply = { result: { error?: Record<string, string[] | null> }; signedOff: { id: string; verdict: string; recipients: string[]; mailOk: boolean } | null };

test("a viewer or a crew member may not sign off", async () => {
  for (const user of [w.users.viewer, w.users.crew]) {
    const a = await signOff(user, w.failing.id, { decision: "approved", note: "looks fine" });
    expect(a.status).toBe(403);
  }
  expect(await getDb().select().from(signOffs).where(eq(signOffs.sensorId, w.failing.id))).toHaveLength(0);
});

test("rejecting needs a note, and approving a failed sensor needs one too; the typed values come back", async () => {
  const a = await signOff(w.users.qa, w.failing.id, { decision: "rejected", note: "" });
  expect(a.status).toBe(400);
  expect((a.body as Reply).result.error?.note?.[0]).toMatch(/why/i);
  const b = await signOff(w.users.qa, w.failing.id, { decision: "approved", from: "2026-05-04", to: "2026-05-05" });
  expect(b.status).toBe(400);
  expect((b.body as Reply).result.error?.note?.[0]).toMatch(/verdict is "fail"/);
  expect((b.body as { result: { initialValue?: Record<string, unknown> } }).result.initialValue?.from).toBe("2026-05-04");
  const c = await signOff(w.users.qa, w.failing.id, { decision: "approved", from: "2026-05-06", to: "2026-05-01" });
  expect(c.status).toBe(400);
  expect((c.body as Reply).result.error?.to?.[0]).toMatch(/ends before it starts/);
  expect(await getDb().select().from(signOffs).where(eq(signOffs.sensorId, w.failing.id))).toHaveLength(0);
});

test("a rejection freezes the full report into the sign-off, lands in the audit trail and mails the crew and the admins", async () => {
  const live = await buildSensorReport(w.users.qa, w.failing.id, { projectId: w.project.id });
  const a = await signOff(w.users.qa, w.failing.id, { decision: "rejected", projectId: w.project.id, note: "Dark targets read 18 mm long in bright sun; back to the maker." });
  expect(a.status).toBe(200);
  const done = (a.body as Reply).signedOff!;
  expect(done.verdict).toBe("fail");
  const [row] = await getDb().select().from(signOffs).where(eq(signOffs.id, done.id));
  expect(row!.decision).toBe("rejected");
  expect(row!.projectId).toBe(w.project.id);
  expect(row!.verdict).toBe("fail");
  expect(row!.byUserId).toBe(w.users.qa.id);
  expect(row!.snapshot).toEqual(live);
  expect(row!.biasMm).toBeCloseTo(live!.biasMm!, 9);
  expect([...row!.sessionIds].sort()).toEqual(
    w.sessions
      .filter((s) => s.sensorId === w.failing.id)
      .map((s) => s.id)
      .sort(),
  );
  const audits = await getDb()
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.entity, "sensor"), eq(auditLog.entityId, w.failing.id), eq(auditLog.action, "sign-off.rejected")));
  expect(audits).toHaveLength(1);
  expect(audits[0]!.actorUserId).toBe(w.users.qa.id);

  // both crew members synced shots of this sensor; the admin is told too; the viewer and QA are not
  expect(done.recipients.sort()).toEqual([w.users.admin.email, w.users.crew.email, w.users.crew2.email].sort());
  expect(done.mailOk).toBe(true);
  for (const to of [w.users.crew.email, w.users.crew2.email, w.users.admin.email]) {
    const mails = mailsTo(mailDir, to).filter((m) => /rejected/i.test(m.subject));
    expect(mails, to).toHaveLength(1);
    expect(mails[0]!.subject).toContain("Roof scanner RS-1");
    expect(mails[0]!.text).toContain("Dark targets read 18 mm long");
    // issue 15: the mail leads with the rule's accuracy statement (default "rmse": no 95 % figure)
    expect(mails[0]!.text).toMatch(/Tested \d+\.\d mm range RMSE against \d+ check-shots, reference not included/);
    expect(mails[0]!.text).not.toMatch(/95 %/);
    expect(mails[0]!.text).toContain(`http://shotbook.test/review/sensors/${w.failing.id}`);
  }
  expect(mailsTo(mailDir, w.users.viewer.email)).toHaveLength(0);

  const page = (await sensorPage.loader({ request: apiRequest(`/review/sensors/${w.failing.id}`, { user: w.users.viewer }), params: { sensorId: w.failing.id }, context: {} } as never)) as Awaited<
    ReturnType<typeof sensorPage.loader>
  >;
  expect(page.signOffs[0]).toMatchObject({ id: done.id, decision: "rejected", verdict: "fail", projectName: "River valley corridor" });
});

test("the snapshot stays as signed when a shot is excluded afterwards", async () => {
  const [row] = await getDb().select().from(signOffs).where(eq(signOffs.sensorId, w.failing.id));
  const frozen = row!.snapshot as { n: number; biasMm: number };
  const shot = w.shotsOf(w.failing.id)[20]!;
  const r = await call(exclusionApi.action as never, apiRequest(`/api/shots/${shot.id}/exclusion`, { user: w.users.qa, json: { reason: "Reflector knocked" } }), { shotId: shot.id });
  expect(r.status).toBe(200);
  const live = (await buildSensorReport(w.users.qa, w.failing.id, {}))!;
  expect(live.n).toBe(frozen.n - 1);
  const [again] = await getDb().select().from(signOffs).where(eq(signOffs.id, row!.id));
  expect(again!.snapshot).toEqual(row!.snapshot);
  await call(exclusionApi.action as never, apiRequest(`/api/shots/${shot.id}/exclusion`, { user: w.users.qa, method: "DELETE", json: { reason: "undo" } }), { shotId: shot.id });
});

test("a passing sensor is approved without a note; the admin must name its project; a period approval freezes only that period", async () => {
  // issue 14: the sensor is in a project, so even an admin names it (a sign-off freezes one project's shots)
  const noProject = await signOff(w.users.admin, w.passing.id, { decision: "approved", note: "kept as typed" });
  expect(noProject.status).toBe(400);
  const refused = noProject.body as Reply & { result: { initialValue?: Record<string, unknown> } };
  expect(refused.result.error?.projectId?.[0]).toMatch(/choose the project this sign-off is for/);
  expect(refused.result.initialValue).toMatchObject({ decision: "approved", note: "kept as typed" });
  expect(refused.signedOff).toBeNull();
  const ok = await signOff(w.users.admin, w.passing.id, { decision: "approved", projectId: w.project.id });
  expect(ok.status).toBe(200);
  expect((ok.body as Reply).signedOff!.verdict).toBe("pass");
  const noNote = await signOff(w.users.admin, w.passing.id, { decision: "approved", projectId: w.project.id, from: "2026-05-05", to: "2026-05-05" });
  expect(noNote.status).toBe(400); // 12 shots that day: "insufficient" needs a reason to approve
  const a = await signOff(w.users.admin, w.passing.id, { decision: "approved", projectId: w.project.id, from: "2026-05-05", to: "2026-05-05", note: "Sunny-day recheck only" });
  expect(a.status).toBe(200);
  const [row] = await getDb()
    .select()
    .from(signOffs)
    .where(eq(signOffs.id, (a.body as Reply).signedOff!.id));
  expect(row!.periodFrom).toBe("2026-05-05");
  expect(row!.periodTo).toBe("2026-05-05");
  expect((row!.snapshot as { n: number }).n).toBe(12);
  expect(row!.verdict).toBe("insufficient");
  expect(row!.note).toBe("Sunny-day recheck only");
});

test("notifyFailedVerdicts mails QA once when a sensor's verdict turns to fail, not again while it stays failed", async () => {
  const qa2 = await makeUser("qa");
  // issue 14: only QA members of a project of the sensor hear of it
  await addMemberUsers(w.project.id, [qa2]);
  const outsider = await makeUser("qa");
  const before = mailsTo(mailDir, qa2.email).length;
  const first = await notifyFailedVerdicts([w.failing.id, w.passing.id]);
  expect(first.notified).toEqual([w.failing.id]);
  const got = mailsTo(mailDir, qa2.email).slice(before);
  expect(got).toHaveLength(1);
  expect(got[0]!.subject).toContain("Sensor failed its range check");
  expect(got[0]!.text).toMatch(/bias/);
  expect(mailsTo(mailDir, w.users.qa.email).filter((m) => /failed its range check/.test(m.subject))).toHaveLength(1);
  const second = await notifyFailedVerdicts([w.failing.id]);
  expect(second.notified).toEqual([]);
  expect(mailsTo(mailDir, qa2.email).length).toBe(before + 1);
  expect(mailsTo(mailDir, w.users.crew.email).filter((m) => /failed its range check/.test(m.subject))).toHaveLength(0);
  expect(mailsTo(mailDir, outsider.email)).toHaveLength(0);
});
