// Project scoping (api.md v1.1): an admin sees everything; anyone else sees only the records of
// the projects they are a member of. Records outside a user's projects answer 404 exactly as if
// they did not exist, so callers turn "not in scope" into the same answer as "not found".
// Every model function that reads or writes on someone's behalf asks this module, never the
// membership table directly.
import { eq } from "drizzle-orm";
import { getDb, type Db } from "~/db/client.server";
import { projectMembers } from "~/db/schema";
import type { Actor } from "./actor";

/** `all`: no filter (admins). Otherwise the ids of the projects the actor is a member of. */
export type Scope = { all: true } | { all: false; projectIds: string[] };

export async function scopeOf(actor: Pick<Actor, "id" | "role">, db: Db = getDb()): Promise<Scope> {
  if (actor.role === "admin") return { all: true };
  const rows = await db.select({ projectId: projectMembers.projectId }).from(projectMembers).where(eq(projectMembers.userId, actor.id));
  return { all: false, projectIds: rows.map((r) => r.projectId).sort() };
}

/** True when the scope may see a record belonging to `projectId` (null: made before projects scoped records — admins only). */
export function inScope(scope: Scope, projectId: string | null | undefined): boolean {
  if (scope.all) return true;
  return projectId != null && scope.projectIds.includes(projectId);
}

/** True when the scope may see something that belongs to any of these projects. */
export function anyInScope(scope: Scope, projectIds: readonly string[]): boolean {
  if (scope.all) return true;
  return projectIds.some((p) => scope.projectIds.includes(p));
}
