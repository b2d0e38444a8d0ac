// Project membership (issue 14, api.md v1.1): who may see and work on a project's records.
// Admins see every project without a row, so only an admin changes membership. Changes are
// idempotent (adding a member twice or removing a non-member changes nothing and writes
// nothing) and every real change lands in the audit trail under the project, so the project
// page's history says who added or removed whom.
import { and, asc, eq, inArray } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { projectMembers, projects, users, type Role } from "~/db/schema";
import type { Actor } from "./actor";
import { audit } from "./audit.server";
import { inviteUser, normalizeEmail } from "./users.server";
import { AppError } from "~/contract/errors";

export type MemberRow = { userId: string; email: string; name: string; role: Role; active: boolean; addedAt: string };
export type MembershipRow = { projectId: string; name: string; client: string; retiredAt: string | null; addedAt: string };
export type NotFound = { status: 404; body: { error: string } };
export type MemberChange = { status: 200 | 201; body: { projectId: string; userId: string; changed: boolean } };

function forbidUnlessAdmin(actor: Pick<Actor, "role">) {
  // The same answer as the users admin (users.server.ts): a JSON 403 the route lets through.
  if (actor.role !== "admin") throw new AppError(403, "Only an admin may manage project members.");
}

const noProject = (id: string): NotFound => ({ status: 404, body: { error: `No project with id "${id}".` } });
const noUser = (id: string): NotFound => ({ status: 404, body: { error: `No user with id "${id}".` } });

async function projectRow(projectId: string) {
  const [row] = await getDb().select({ id: projects.id, name: projects.name }).from(projects).where(eq(projects.id, projectId)).limit(1);
  return row ?? null;
}

async function userRow(userId: string) {
  const [row] = await getDb().select({ id: users.id, email: users.email, name: users.name, role: users.role }).from(users).where(eq(users.id, userId)).limit(1);
  return row ?? null;
}

/** The members of a project (admins are not listed: they see every project anyway); null when there is no such project. */
export async function listMembers(actor: Actor, projectId: string): Promise<MemberRow[] | null> {
  forbidUnlessAdmin(actor);
  if (!(await projectRow(projectId))) return null;
  return getDb()
    .select({ userId: users.id, email: users.email, name: users.name, role: users.role, active: users.active, addedAt: projectMembers.addedAt })
    .from(projectMembers)
    .innerJoin(users, eq(users.id, projectMembers.userId))
    .where(eq(projectMembers.projectId, projectId))
    .orderBy(asc(users.email));
}

/** Adds a user to a project: 201 when added, 200 when they already were a member (nothing written). */
export async function addMember(actor: Actor, projectId: string, userId: string): Promise<MemberChange | NotFound> {
  forbidUnlessAdmin(actor);
  const [project, user] = await Promise.all([projectRow(projectId), userRow(userId)]);
  if (!project) return noProject(projectId);
  if (!user) return noUser(userId);
  const db = getDb();
  // One statement decides, so two admins adding the same person at once write one row and one audit entry.
  const inserted = await db.insert(projectMembers).values({ projectId, userId, addedBy: actor.id }).onConflictDoNothing().returning({ userId: projectMembers.userId });
  if (inserted.length === 0) return { status: 200, body: { projectId, userId, changed: false } };
  await audit(actor.id, "member.add", "project", projectId, { userId, email: user.email, role: user.role, project: project.name });
  return { status: 201, body: { projectId, userId, changed: true } };
}

/** Removes a user from a project: 200 either way; `changed` says whether they were a member. */
export async function removeMember(actor: Actor, projectId: string, userId: string): Promise<MemberChange | NotFound> {
  forbidUnlessAdmin(actor);
  const [project, user] = await Promise.all([projectRow(projectId), userRow(userId)]);
  if (!project) return noProject(projectId);
  if (!user) return noUser(userId);
  const removed = await getDb()
    .delete(projectMembers)
    .where(and(eq(projectMembers.projectId, projectId), eq(projectMembers.userId, userId)))
    .returning({ userId: projectMembers.userId });
  if (removed.length === 0) return { status: 200, body: { projectId, userId, changed: false } };
  await audit(actor.id, "member.remove", "project", projectId, { userId, email: user.email, role: user.role, project: project.name });
  return { status: 200, body: { projectId, userId, changed: true } };
}

/** The projects a user is a member of (retired ones too, marked); null when there is no such user. */
export async function projectsOfUser(actor: Actor, userId: string): Promise<MembershipRow[] | null> {
  forbidUnlessAdmin(actor);
  if (!(await userRow(userId))) return null;
  return getDb()
    .select({ projectId: projects.id, name: projects.name, client: projects.client, retiredAt: projects.retiredAt, addedAt: projectMembers.addedAt })
    .from(projectMembers)
    .innerJoin(projects, eq(projects.id, projectMembers.projectId))
    .where(eq(projectMembers.userId, userId))
    .orderBy(asc(projects.name));
}

/** Users by e-mail address (normalised), for the add-by-e-mail form and POST /api/projects. */
export async function usersByEmail(emails: string[]): Promise<Map<string, { id: string; email: string; role: Role }>> {
  const wanted = [...new Set(emails.map(normalizeEmail))];
  if (wanted.length === 0) return new Map();
  const rows = await getDb().select({ id: users.id, email: users.email, role: users.role }).from(users).where(inArray(users.email, wanted));
  return new Map(rows.map((r) => [r.email, r]));
}

/**
 * Invites a new person straight into a project: the user is made and mailed exactly as the users
 * admin does (users.server.ts inviteUser), then added as a member. A taken address is a
 * AppError (400) on the e-mail field, as on the users page.
 */
export async function inviteMember(
  actor: Actor,
  projectId: string,
  input: { email: string; name: string; role: Role },
): Promise<{ status: 201; body: { projectId: string; userId: string; mailSent: boolean } } | NotFound> {
  forbidUnlessAdmin(actor);
  if (!(await projectRow(projectId))) return noProject(projectId);
  const { id, mailSent } = await inviteUser(actor, input);
  const added = await addMember(actor, projectId, id);
  if (added.status === 404) throw new AppError(400, added.body.error);
  return { status: 201, body: { projectId, userId: id, mailSent } };
}

/** Projects an admin may add this user to (live projects the user is not yet a member of). */
export async function projectsToJoin(actor: Actor, userId: string) {
  forbidUnlessAdmin(actor);
  const mine = new Set((await getDb().select({ p: projectMembers.projectId }).from(projectMembers).where(eq(projectMembers.userId, userId))).map((r) => r.p));
  const all = await getDb().select({ id: projects.id, name: projects.name, client: projects.client, retiredAt: projects.retiredAt }).from(projects).orderBy(asc(projects.name));
  return all.filter((p) => !p.retiredAt && !mine.has(p.id));
}
