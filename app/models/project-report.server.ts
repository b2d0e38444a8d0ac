// The project verification report (issue 14): what the client receives. Its content is built
// from the records (the per-sensor figures through the sensor report of reports.server, judged
// by the project's rule over the project's own sessions), written as RFC 8785 canonical JSON and
// hashed with SHA-256. A version is stored whenever the content differs from the last stored
// one (a new shot, an exclusion or restore, a sign-off, a rule change, a renamed sensor…);
// versions are never changed or deleted, so every document a client received stays retrievable
// and its hash can be checked against its stored content.
//
// Access: members of the project (any role) and admins (scope.server); anyone else gets null,
// which the routes answer with 404 exactly like an unknown project.
import { and, asc, desc, eq, inArray, sql } from "drizzle-orm";
import { getDb, type Db } from "~/db/client.server";
import { projectReportVersions, projects, users } from "~/db/schema";
import { versionedNumber, type ProjectReportContent } from "~/domain";
import type { Actor } from "./actor";
import { audit } from "./audit.server";
import { inScope, scopeOf } from "./scope.server";
import { isConstraintError } from "./registry-upsert.server";
import { buildProjectReportContent, canonicalText, sha256Hex, who } from "./project-report-content.server";

export type ProjectRow = typeof projects.$inferSelect;

export type ReportVersion = {
  projectId: string;
  version: number;
  /** e.g. "SB-CORRIDOR-v3" */
  number: string;
  sha256: string;
  createdAt: string;
  createdBy: string;
  content: ProjectReportContent;
  /** The stored canonical text, exactly what was hashed. */
  text: string;
};

export type VersionListRow = { version: number; number: string; sha256: string; createdAt: string; createdBy: string };

/** The project when the actor may see it (member or admin), else null (answer 404). */
export async function projectForActor(actor: Pick<Actor, "id" | "role">, projectId: string, db: Db = getDb()): Promise<ProjectRow | null> {
  const scope = await scopeOf(actor, db);
  if (!inScope(scope, projectId)) return null;
  const [row] = await db.select().from(projects).where(eq(projects.id, projectId));
  return row ?? null;
}

type StoredRow = typeof projectReportVersions.$inferSelect & { byName: string | null; byEmail: string | null };

function versionOf(r: StoredRow): ReportVersion {
  return {
    projectId: r.projectId,
    version: r.version,
    number: versionedNumber(r.projectId, r.version),
    sha256: r.sha256,
    createdAt: r.createdAt,
    createdBy: r.byName || r.byEmail ? who(r.byName, r.byEmail) : "Shotbook",
    content: JSON.parse(r.content) as ProjectReportContent,
    text: r.content,
  };
}

function storedQuery(db: Db, projectId: string) {
  return db
    .select({
      projectId: projectReportVersions.projectId,
      version: projectReportVersions.version,
      content: projectReportVersions.content,
      sha256: projectReportVersions.sha256,
      createdAt: projectReportVersions.createdAt,
      createdBy: projectReportVersions.createdBy,
      byName: users.name,
      byEmail: users.email,
    })
    .from(projectReportVersions)
    .leftJoin(users, eq(users.id, projectReportVersions.createdBy))
    .where(eq(projectReportVersions.projectId, projectId))
    .$dynamic();
}

/**
 * The report as it stands now: the last stored version when its content is the current one,
 * else a new version (number + 1). Null when the actor may not see the project.
 */
export async function currentProjectReport(actor: Actor, projectId: string, db: Db = getDb()): Promise<ReportVersion | null> {
  const project = await projectForActor(actor, projectId, db);
  if (!project) return null;
  const text = canonicalText(await buildProjectReportContent(actor, project, db));
  const sha256 = sha256Hex(text);
  // two readers may find the same change at once: the primary key (project, version) lets one
  // write it; the other reads it back
  for (let attempt = 0; attempt < 5; attempt++) {
    const [last] = await storedQuery(db, projectId).orderBy(desc(projectReportVersions.version)).limit(1);
    if (last && last.sha256 === sha256) return versionOf(last);
    const version = (last?.version ?? 0) + 1;
    try {
      await db.insert(projectReportVersions).values({ projectId, version, content: text, sha256, createdBy: actor.id === "system" ? null : actor.id });
    } catch (e) {
      if (isConstraintError(e)) continue;
      throw e;
    }
    await audit(actor.id === "system" ? null : actor.id, "project-report.version", "project", projectId, { version, sha256 });
    const [row] = await storedQuery(db, projectId).where(and(eq(projectReportVersions.projectId, projectId), eq(projectReportVersions.version, version)));
    return versionOf(row!);
  }
  throw new Error(`The report of project ${projectId} kept changing while it was written; try again.`);
}

/** Every stored version, newest first (null when the actor may not see the project). */
export async function listProjectReportVersions(actor: Actor, projectId: string, db: Db = getDb()): Promise<VersionListRow[] | null> {
  if (!(await projectForActor(actor, projectId, db))) return null;
  const rows = await db
    .select({ version: projectReportVersions.version, sha256: projectReportVersions.sha256, createdAt: projectReportVersions.createdAt, byName: users.name, byEmail: users.email })
    .from(projectReportVersions)
    .leftJoin(users, eq(users.id, projectReportVersions.createdBy))
    .where(eq(projectReportVersions.projectId, projectId))
    .orderBy(desc(projectReportVersions.version));
  return rows.map((r) => ({
    version: r.version,
    number: versionedNumber(projectId, r.version),
    sha256: r.sha256,
    createdAt: r.createdAt,
    createdBy: r.byName || r.byEmail ? who(r.byName, r.byEmail) : "Shotbook",
  }));
}

/** One stored version as it was (null when unknown or out of the actor's scope). */
export async function projectReportVersion(actor: Actor, projectId: string, version: number, db: Db = getDb()): Promise<ReportVersion | null> {
  if (!Number.isInteger(version) || version < 1) return null;
  if (!(await projectForActor(actor, projectId, db))) return null;
  const [row] = await storedQuery(db, projectId).where(and(eq(projectReportVersions.projectId, projectId), eq(projectReportVersions.version, version)));
  return row ? versionOf(row) : null;
}

/** The projects whose verification report the actor may open (members: theirs; admins: all live ones). */
export async function reportProjects(actor: Pick<Actor, "id" | "role">, db: Db = getDb()): Promise<{ id: string; name: string; client: string }[]> {
  const scope = await scopeOf(actor, db);
  if (!scope.all && scope.projectIds.length === 0) return [];
  const rows = await db
    .select({ id: projects.id, name: projects.name, client: projects.client })
    .from(projects)
    .where(scope.all ? sql`${projects.retiredAt} IS NULL` : and(sql`${projects.retiredAt} IS NULL`, inArray(projects.id, scope.projectIds)))
    .orderBy(asc(projects.name), asc(projects.id));
  return rows;
}
