// What the registry models (sensors, sites, tapes, EDMs, projects) share when they write: who is
// asking, the audit trail's field diff, and the one create rule of api.md's registry routes — a
// new record answers 201, the same body again 200 with the record it made (by its id, or with no
// id by its twin), other content under a taken id 409, a bad body 400. Two racing creates of the
// same body both end in one record: the loser's insert hits the key and the create runs again.
// Also the retire / restore pair and the "of the actor's projects" lists of tapes and EDMs.
import { and, asc, eq, isNull, type SQL } from "drizzle-orm";
import type { SQLiteColumn, SQLiteTable } from "drizzle-orm/sqlite-core";
import type { z } from "zod";
import { getDb, type Db } from "~/db/client.server";
import { projects } from "~/db/schema";
import type { Actor } from "~/models/actor";
import { audit } from "~/models/audit.server";
import { projectColInScope, scopeOf, type Scope } from "~/models/scope.server";
import { invalid, issuesToErrors, stableStringify, type NotFound, type RegistryResult } from "~/contract/registry";

/** Who is asking; null or "system" for the seed and command-line tools. */
export type RegistryActor = { id: string } | null | "system";

export function actorId(actor: RegistryActor): string | null {
  return actor && typeof actor === "object" ? actor.id : null;
}

export const nowIso = () => new Date().toISOString();

/** Fields whose values differ between two flat records (for the audit trail). */
export function changedFields<T extends Record<string, unknown>>(before: T, after: T): Partial<Record<keyof T, { from: unknown; to: unknown }>> {
  const out: Partial<Record<keyof T, { from: unknown; to: unknown }>> = {};
  for (const k of Object.keys(after) as (keyof T)[]) {
    if (stableStringify(before[k]) !== stableStringify(after[k])) out[k] = { from: before[k] ?? null, to: after[k] ?? null };
  }
  return out;
}

/** True when a unique or primary-key constraint refused the insert (a racing twin). */
export function isConstraintError(e: unknown) {
  const s = String((e as { code?: string; message?: string })?.code ?? "") + String((e as Error)?.message ?? "");
  return /SQLITE_CONSTRAINT|UNIQUE constraint|PRIMARY KEY/i.test(s);
}

export type Parsed<B> = { ok: true; value: B } | { ok: false; result: ReturnType<typeof invalid> };

/** A registry body through its contract schema; a bad one is the 400 answer with every field's message. */
export function parseRegistryBody<S extends z.ZodType>(schema: S, body: unknown): Parsed<z.output<S>> {
  const parsed = schema.safeParse(body);
  return parsed.success ? { ok: true, value: parsed.data } : { ok: false, result: invalid(issuesToErrors(parsed.error.issues)) };
}

/** One kind of registry record as the create rule sees it. */
export type CreateRule<B extends { id?: string }, R> = {
  /** its name in the 409 answer ("sensor", "reference EDM") */
  noun: string;
  parse(body: unknown): Parsed<B> | Promise<Parsed<B>>;
  byId(id: string): Promise<R | null>;
  /** the records a body without an id may have made before (same label, serial or name) */
  twins(b: B): Promise<R[]>;
  same(row: R, b: B): boolean;
  /** the 200 answer's body for a record that already exists */
  answer(row: R): { id: string; [k: string]: unknown };
  /** writes the new record and its audit row in one transaction; returns the 201 (or a 409 found before writing) */
  insert(actor: RegistryActor, id: string, b: B): Promise<RegistryResult>;
};

/** POST /api/<registry>, the admin forms and the seed: 201 new, 200 same body again, 400, 409. */
export async function createRegistryRecord<B extends { id?: string }, R>(rule: CreateRule<B, R>, actor: RegistryActor, body: unknown): Promise<RegistryResult> {
  return createOnce(rule, actor, body, true);
}

async function createOnce<B extends { id?: string }, R>(rule: CreateRule<B, R>, actor: RegistryActor, body: unknown, retry: boolean): Promise<RegistryResult> {
  const p = await rule.parse(body);
  if (!p.ok) return p.result;
  const b = p.value;
  if (b.id) {
    const existing = await rule.byId(b.id);
    if (existing) return rule.same(existing, b) ? { status: 200, body: rule.answer(existing) } : { status: 409, body: { error: `A ${rule.noun} with id "${b.id}" exists with other content.` } };
  } else {
    // No id: the same body again finds the record it made the first time.
    const twin = (await rule.twins(b)).find((r) => rule.same(r, b));
    if (twin) return { status: 200, body: rule.answer(twin) };
  }
  try {
    return await rule.insert(actor, b.id ?? crypto.randomUUID(), b);
  } catch (e) {
    if (retry && isConstraintError(e)) return createOnce(rule, actor, body, false);
    throw e;
  }
}

/** A registry table that retires rather than deletes (sensors, sites, tapes, EDMs, projects). */
export type Retirable = {
  entity: "sensor" | "site" | "tape" | "edm" | "project";
  noun: string;
  retiredAt(id: string): Promise<{ retiredAt: string | null } | null>;
  setRetired(tx: Pick<Db, "update">, id: string, retiredAt: string | null, at: string): Promise<unknown>;
};

/** Retires a record (kept, hidden from lists); retiring it again answers its first retirement. */
export async function retireRecord(kind: Retirable, actor: RegistryActor, id: string, reason = ""): Promise<RegistryResult | NotFound> {
  const row = await kind.retiredAt(id);
  if (!row) return { status: 404, body: { error: `No ${kind.noun} with id "${id}".` } };
  if (row.retiredAt) return { status: 200, body: { id, retiredAt: row.retiredAt } };
  const at = nowIso();
  await getDb().transaction(async (tx) => {
    await kind.setRetired(tx, id, at, at);
    await audit(actorId(actor), "retire", kind.entity, id, { reason }, tx);
  });
  return { status: 200, body: { id, retiredAt: at } };
}

export async function restoreRecord(kind: Retirable, actor: RegistryActor, id: string): Promise<RegistryResult | NotFound> {
  const row = await kind.retiredAt(id);
  if (!row) return { status: 404, body: { error: `No ${kind.noun} with id "${id}".` } };
  if (!row.retiredAt) return { status: 200, body: { id } };
  await getDb().transaction(async (tx) => {
    await kind.setRetired(tx, id, null, nowIso());
    await audit(actorId(actor), "restore", kind.entity, id, { retiredAt: row.retiredAt }, tx);
  });
  return { status: 200, body: { id } };
}

/** Tapes and EDMs: records a crew sees through the projects that list them (issue 14). */
export type ProjectListed = {
  table: SQLiteTable;
  id: SQLiteColumn;
  label: SQLiteColumn;
  retiredAt: SQLiteColumn;
  listedInScope(scope: Scope, idCol: SQLiteColumn): SQL | undefined;
  link: SQLiteTable;
  linkProjectId: SQLiteColumn;
  linkId: SQLiteColumn;
};

/**
 * issue 14: an admin lists every record; anyone else only those their projects list, each with
 * the ids of those of their projects that list it.
 */
export async function listProjectListed<R extends { id: string }>(kind: ProjectListed, actor: Pick<Actor, "id" | "role">, includeRetired: boolean): Promise<(R & { projectIds: string[] })[]> {
  const db = getDb();
  const scope = await scopeOf(actor, db);
  const [rows, links] = await Promise.all([
    db
      .select()
      .from(kind.table)
      .where(and(includeRetired ? undefined : isNull(kind.retiredAt), kind.listedInScope(scope, kind.id)))
      .orderBy(asc(kind.label)) as Promise<unknown[]> as Promise<R[]>,
    db.select({ projectId: kind.linkProjectId, id: kind.linkId }).from(kind.link).where(projectColInScope(scope, kind.linkProjectId)) as Promise<{ projectId: string; id: string }[]>,
  ]);
  const byId = new Map<string, string[]>();
  for (const l of links) byId.set(l.id, [...(byId.get(l.id) ?? []), l.projectId]);
  return rows.map((r) => ({ ...r, projectIds: (byId.get(r.id) ?? []).sort() }));
}

/** One record as the actor may see it, with the projects (of theirs) that list it; null answers like "no such record". */
export async function getProjectListedFor<R>(kind: ProjectListed, actor: Pick<Actor, "id" | "role">, id: string): Promise<(R & { projects: { id: string; name: string }[] }) | null> {
  const db = getDb();
  const scope = await scopeOf(actor, db);
  const [row] = (await db
    .select()
    .from(kind.table)
    .where(and(eq(kind.id, id), kind.listedInScope(scope, kind.id)))
    .limit(1)) as unknown[] as R[];
  if (!row) return null;
  const ps = await db
    .select({ id: projects.id, name: projects.name })
    .from(kind.link)
    .innerJoin(projects, eq(projects.id, kind.linkProjectId))
    .where(and(eq(kind.linkId, id), projectColInScope(scope, kind.linkProjectId)))
    .orderBy(asc(projects.name));
  return { ...row, projects: ps };
}

/**
 * GET /api/tapes and /api/edms (issue 14): the live records of the actor's projects (admins: all),
 * each with `projectIds`; `?project=` narrows to one project, and a project the actor cannot see
 * answers 404 like an unknown one.
 */
export async function projectListedJson<R extends { id: string; createdAt: unknown; updatedAt: unknown; retiredAt: unknown }>(
  kind: ProjectListed,
  key: string,
  actor: Pick<Actor, "id" | "role">,
  params: URLSearchParams,
): Promise<{ status: 200 | 404; body: unknown }> {
  const project = params.get("project");
  if (project) {
    const scope = await scopeOf(actor);
    const [p] = await getDb()
      .select({ id: projects.id })
      .from(projects)
      .where(and(eq(projects.id, project), projectColInScope(scope, projects.id)))
      .limit(1);
    if (!p) return { status: 404, body: { error: `No project with id "${project}".` } };
  }
  const rows = (await listProjectListed<R>(kind, actor, false)).filter((r) => !project || r.projectIds.includes(project));
  return { status: 200, body: { [key]: rows.map(({ createdAt: _c, updatedAt: _u, retiredAt: _r, ...r }) => r) } };
}
