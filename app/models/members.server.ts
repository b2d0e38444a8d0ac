// Project membership (issue 14): who may see and work on a project's records. Admins manage
// it; every change lands in the audit trail (entity "project", actions member.add/member.remove).
// The admin screens and POST /api/projects build on these three functions.
import { and, asc, eq } from "drizzle-orm";
import { getDb, type Db } from "~/db/client.server";
import { projectMembers, projects, users, type Role } from "~/db/schema";
import { audit } from "~/models/audit.server";
import type { Actor } from "./actor";

export type MemberRow = { userId: string; email: string; name: string; role: Role; active: boolean; addedAt: string; addedBy: string | null };
export type MemberAnswer = { status: 200 | 201; body: { projectId: string; userId: string } } | { status: 403 | 404; body: { error: string } };

const forbidden = { status: 403 as const, body: { error: "Only an admin may change a project's members." } };

async function projectAndUser(db: Db, projectId: string, userId: string) {
  const [[p], [u]] = await Promise.all([
    db.select({ id: projects.id }).from(projects).where(eq(projects.id, projectId)).limit(1),
    db.select({ id: users.id }).from(users).where(eq(users.id, userId)).limit(1),
  ]);
  if (!p) return { status: 404 as const, body: { error: `No project ${projectId}.` } };
  if (!u) return { status: 404 as const, body: { error: `No user ${userId}.` } };
  return null;
}

/** Makes the user a member of the project: 201 added, 200 already a member. Admin only. */
export async function addMember(actor: Actor, projectId: string, userId: string, db: Db = getDb()): Promise<MemberAnswer> {
  if (actor.role !== "admin") return forbidden;
  const missing = await projectAndUser(db, projectId, userId);
  if (missing) return missing;
  const added = await db
    .insert(projectMembers)
    .values({ projectId, userId, addedBy: actor.id === "system" ? null : actor.id })
    .onConflictDoNothing()
    .returning({ userId: projectMembers.userId });
  if (!added.length) return { status: 200, body: { projectId, userId } };
  await audit(actor.id === "system" ? null : actor.id, "member.add", "project", projectId, { userId }, db);
  return { status: 201, body: { projectId, userId } };
}

/** Ends the user's membership: 200 (also when they were not a member). Admin only. */
export async function removeMember(actor: Actor, projectId: string, userId: string, db: Db = getDb()): Promise<MemberAnswer> {
  if (actor.role !== "admin") return forbidden;
  const missing = await projectAndUser(db, projectId, userId);
  if (missing) return missing;
  const gone = await db
    .delete(projectMembers)
    .where(and(eq(projectMembers.projectId, projectId), eq(projectMembers.userId, userId)))
    .returning({ userId: projectMembers.userId });
  if (gone.length) await audit(actor.id === "system" ? null : actor.id, "member.remove", "project", projectId, { userId }, db);
  return { status: 200, body: { projectId, userId } };
}

/** The members of a project, by name. Admin only (null for anyone else or an unknown project). */
export async function listMembers(actor: Actor, projectId: string, db: Db = getDb()): Promise<MemberRow[] | null> {
  if (actor.role !== "admin") return null;
  const [p] = await db.select({ id: projects.id }).from(projects).where(eq(projects.id, projectId)).limit(1);
  if (!p) return null;
  return db
    .select({ userId: users.id, email: users.email, name: users.name, role: users.role, active: users.active, addedAt: projectMembers.addedAt, addedBy: projectMembers.addedBy })
    .from(projectMembers)
    .innerJoin(users, eq(users.id, projectMembers.userId))
    .where(eq(projectMembers.projectId, projectId))
    .orderBy(asc(users.name), asc(users.email));
}

/** The projects a user is a member of (ids and names), for the user page. Admin only. */
export async function projectsOfUser(actor: Actor, userId: string, db: Db = getDb()) {
  if (actor.role !== "admin" && actor.id !== userId) return [];
  return db
    .select({ id: projects.id, name: projects.name, client: projects.client })
    .from(projectMembers)
    .innerJoin(projects, eq(projects.id, projectMembers.projectId))
    .where(eq(projectMembers.userId, userId))
    .orderBy(asc(projects.name));
}
