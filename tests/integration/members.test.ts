// Project membership (app/models/members.server.ts): admin only (403 for every other role, 404
// for an unknown project or user), idempotent adds and removals, one audit row per real change,
// and inviting a new person straight into a project through the users admin's invitation path.
import { afterAll, beforeAll, expect, test } from "vitest";
import { and, eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { auditLog, mailLog, projectMembers, users } from "~/db/schema";
import { resetEnvCache } from "~/env.server";
import { startFakeSmtp, type FakeSmtp } from "~/mail/fake-smtp.server";
import { addMember, inviteMember, listMembers, projectsOfUser, removeMember } from "~/models/members.server";
import { scopeOf } from "~/models/scope.server";
import { AppError } from "~/contract/errors";
import { makeProject, makeUser } from "../support/registry-fixtures";
import { mailsTo, tempMailDir } from "./auth-helpers";

let smtp: FakeSmtp;
let mailDir: string;
beforeAll(async () => {
  mailDir = tempMailDir("members");
  smtp = await startFakeSmtp({ port: 0, mailDir });
  process.env.SMTP_URL = `smtp://127.0.0.1:${smtp.port}`;
  resetEnvCache();
});
afterAll(async () => {
  await smtp.close();
});

const asActor = (u: { id: string; role: "admin" | "qa" | "crew" | "viewer"; email: string }) => ({ id: u.id, role: u.role, email: u.email });
const auditRows = (projectId: string) =>
  getDb()
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.entity, "project"), eq(auditLog.entityId, projectId)));

async function status403(p: Promise<unknown>) {
  try {
    await p;
  } catch (e) {
    if (e instanceof Response || e instanceof AppError) return e.status;
    throw e;
  }
  return "no error";
}

test("only an admin lists, adds or removes members: every other role gets 403 and nothing is written", async () => {
  const project = await makeProject({ name: "Alderbrook bypass corridor" });
  const person = await makeUser("crew");
  for (const role of ["qa", "crew", "viewer"] as const) {
    const actor = asActor(await makeUser(role));
    expect(await status403(listMembers(actor, project.id)), role).toBe(403);
    expect(await status403(addMember(actor, project.id, person.id)), role).toBe(403);
    expect(await status403(removeMember(actor, project.id, person.id)), role).toBe(403);
    expect(await status403(projectsOfUser(actor, person.id)), role).toBe(403);
  }
  expect(await getDb().select().from(projectMembers).where(eq(projectMembers.projectId, project.id))).toHaveLength(0);
  expect(await auditRows(project.id)).toHaveLength(0);
});

test("adding is idempotent (201, then 200 with nothing written), removal too; each real change is one audit row; scope follows", async () => {
  const admin = asActor(await makeUser("admin"));
  const project = await makeProject({ name: "Kestrel quarry survey" });
  const viewer = await makeUser("viewer");

  expect(await scopeOf(asActor(viewer))).toEqual({ all: false, projectIds: [] });
  const a = await addMember(admin, project.id, viewer.id);
  expect(a).toEqual({ status: 201, body: { projectId: project.id, userId: viewer.id, changed: true } });
  const b = await addMember(admin, project.id, viewer.id);
  expect(b).toEqual({ status: 200, body: { projectId: project.id, userId: viewer.id, changed: false } });
  expect(await scopeOf(asActor(viewer))).toEqual({ all: false, projectIds: [project.id] });

  const members = await listMembers(admin, project.id);
  expect(members!.map((m) => [m.email, m.role])).toEqual([[viewer.email, "viewer"]]);
  expect((await projectsOfUser(admin, viewer.id))!.map((p) => p.name)).toEqual(["Kestrel quarry survey"]);
  const [row] = await getDb().select().from(projectMembers).where(eq(projectMembers.userId, viewer.id));
  expect(row!.addedBy).toBe(admin.id);

  let rows = await auditRows(project.id);
  expect(rows.map((r) => [r.action, r.actorUserId])).toEqual([["member.add", admin.id]]);
  expect(rows[0]!.detail).toMatchObject({ userId: viewer.id, email: viewer.email });

  expect(await removeMember(admin, project.id, viewer.id)).toEqual({ status: 200, body: { projectId: project.id, userId: viewer.id, changed: true } });
  expect(await removeMember(admin, project.id, viewer.id)).toEqual({ status: 200, body: { projectId: project.id, userId: viewer.id, changed: false } });
  rows = await auditRows(project.id);
  expect(rows.map((r) => r.action).sort()).toEqual(["member.add", "member.remove"]);
  expect(await listMembers(admin, project.id)).toEqual([]);
  expect(await scopeOf(asActor(viewer))).toEqual({ all: false, projectIds: [] });
});

test("an unknown project or user answers 404 (null for the lists), as the codebase answers 'not found'", async () => {
  const admin = asActor(await makeUser("admin"));
  const project = await makeProject();
  const user = await makeUser("crew");
  expect(await listMembers(admin, "no-such-project")).toBeNull();
  expect(await projectsOfUser(admin, "no-such-user")).toBeNull();
  expect((await addMember(admin, "no-such-project", user.id)).status).toBe(404);
  expect((await addMember(admin, project.id, "no-such-user")).status).toBe(404);
  expect((await removeMember(admin, project.id, "no-such-user")).status).toBe(404);
  expect(await auditRows(project.id)).toHaveLength(0);
});

test("inviting straight into a project makes the user, mails the usual invitation and adds the membership; a taken address is refused", async () => {
  const admin = { ...asActor(await makeUser("admin")), name: "Rowan Admin" };
  const project = await makeProject({ name: "Alderbrook bypass corridor" });
  const r = await inviteMember(admin, project.id, { email: "Tamsin.Reed@Alderbrook-Roads.test", name: "Tamsin Reed", role: "viewer" });
  expect(r.status).toBe(201);
  const [u] = await getDb().select().from(users).where(eq(users.email, "tamsin.reed@alderbrook-roads.test"));
  expect(u).toMatchObject({ name: "Tamsin Reed", role: "viewer", invitedBy: admin.id });
  expect((await listMembers(admin, project.id))!.map((m) => m.email)).toEqual(["tamsin.reed@alderbrook-roads.test"]);
  const mails = mailsTo(mailDir, "tamsin.reed@alderbrook-roads.test");
  expect(mails).toHaveLength(1);
  expect(mails[0]!.subject).toBe("You are invited to Shotbook (viewer)");
  const [log] = await getDb().select().from(mailLog).where(eq(mailLog.to, "tamsin.reed@alderbrook-roads.test"));
  expect(log).toMatchObject({ template: "invitation", status: "sent" });
  expect((await auditRows(project.id)).map((r) => r.action)).toEqual(["member.add"]);

  await expect(inviteMember(admin, project.id, { email: "tamsin.reed@alderbrook-roads.test", name: "Again", role: "qa" })).rejects.toBeInstanceOf(AppError);
  expect((await inviteMember(admin, "no-such-project", { email: "x@alderbrook-roads.test", name: "", role: "viewer" })).status).toBe(404);
  expect(await getDb().select().from(users).where(eq(users.email, "x@alderbrook-roads.test"))).toHaveLength(0);
});
