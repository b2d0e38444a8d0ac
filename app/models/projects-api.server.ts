// POST /api/projects (admin, api.md v1.1): a project with its sensors, sites, tapes, EDMs, members and rule in
// one body. The API nests the rule (`rule: {...}`) where the admin form keeps it flat, so the
// body is checked against the same field rules (projectSchema) with the rule's paths kept as
// `rule.minShots`. Members are part of the project's content: the same body again answers 200,
// the same id with other members, links or rule answers 409, like the other registry POSTs.
import { eq } from "drizzle-orm";
import { AppError } from "~/contract/errors";
import { z } from "zod";
import { getDb } from "~/db/client.server";
import { projectMembers, projectSensors, projectSites, projects, users } from "~/db/schema";
import type { Actor } from "./actor";
import { audit } from "./audit.server";
import { usersByEmail } from "./members.server";
import { contentOf, getProject, linksGiven, rowContent, unknownTapesEdms, writeTapeEdmLinks, type ProjectWithLinks } from "./projects.server";
import { invalid, issuesToErrors, projectSchema, stableStringify, type FieldError, type ProjectBody, type RegistryResult } from "~/contract/registry";
import { isConstraintError } from "./registry-upsert.server";
import { sensorsExist } from "./sensors.server";
import { sitesExist } from "./sites.server";
import { normalizeEmail } from "./users.server";

const RULE_KEYS = {
  minShots: true,
  coverageK: true,
  minWithinPct: true,
  rangeBandEdgesM: true,
  referenceRatio: true,
  referenceInVerdict: true,
  statement: true,
  edmUncertaintyMm: true,
  edmUncertaintyPpm: true,
} as const;

const emailEntry = z.string({ error: "A member is given by e-mail address (text)" }).trim().max(254, "That address is too long").pipe(z.email("That does not look like an e-mail address"));

export const projectApiSchema = projectSchema.pick({ id: true, name: true, client: true, notes: true, sensorIds: true, siteIds: true, tapeIds: true, edmIds: true }).extend({
  memberEmails: z.array(emailEntry, { error: "memberEmails is a list of e-mail addresses" }).max(500, "At most 500 members").default([]),
  // Rule fields are optional: missing ones take the defaults of ranging.md §6 (the schema's defaults).
  rule: projectSchema.pick(RULE_KEYS).default(() => projectSchema.pick(RULE_KEYS).parse({})),
});

type Parsed = { body: ProjectBody; memberIds: string[]; memberEmails: string[] };

async function parse(raw: unknown): Promise<{ ok: true; value: Parsed } | { ok: false; result: RegistryResult }> {
  const parsed = projectApiSchema.safeParse(raw);
  if (!parsed.success) return { ok: false, result: invalid(issuesToErrors(parsed.error.issues)) };
  const { rule, memberEmails, ...rest } = parsed.data;
  const body: ProjectBody = { ...rest, ...rule };
  const emails = memberEmails.map(normalizeEmail);
  const [haveSensors, haveSites, people] = await Promise.all([sensorsExist(body.sensorIds), sitesExist(body.siteIds), usersByEmail(emails)]);
  const errors: FieldError[] = [];
  body.sensorIds.forEach((id, i) => haveSensors.has(id) || errors.push({ path: `sensorIds.${i}`, message: `No sensor with id "${id}"` }));
  body.siteIds.forEach((id, i) => haveSites.has(id) || errors.push({ path: `siteIds.${i}`, message: `No site with id "${id}"` }));
  emails.forEach((e, i) => people.has(e) || errors.push({ path: `memberEmails.${i}`, message: `No user with the e-mail address "${e}": invite them first` }));
  errors.push(...(await unknownTapesEdms(body)));
  if (errors.length) return { ok: false, result: invalid(errors) };
  const unique = [...new Set(emails)].sort();
  return { ok: true, value: { body, memberEmails: unique, memberIds: unique.map((e) => people.get(e)!.id) } };
}

async function memberEmailsOf(projectId: string) {
  const rows = await getDb().select({ email: users.email }).from(projectMembers).innerJoin(users, eq(users.id, projectMembers.userId)).where(eq(projectMembers.projectId, projectId));
  return rows.map((r) => r.email).sort();
}

async function sameContent(existing: ProjectWithLinks, p: Parsed) {
  const withNotes = p.body.notes !== undefined;
  const a = { ...rowContent(existing, withNotes, linksGiven(p.body)), memberEmails: await memberEmailsOf(existing.id) };
  const b = { ...contentOf(p.body, withNotes), memberEmails: p.memberEmails };
  return stableStringify(a) === stableStringify(b);
}

export async function createProjectFromApi(actor: Actor, raw: unknown): Promise<RegistryResult> {
  return createOnce(actor, raw, true);
}

async function createOnce(actor: Actor, raw: unknown, retry: boolean): Promise<RegistryResult> {
  // Defence in depth behind the route guard, with the same answer.
  if (actor.role !== "admin") throw new AppError(403, `The ${actor.role} role may not do this.`);
  const p = await parse(raw);
  if (!p.ok) return p.result;
  const { body, memberIds, memberEmails } = p.value;
  const db = getDb();
  if (body.id) {
    const existing = await getProject(body.id);
    if (existing) {
      return (await sameContent(existing, p.value)) ? { status: 200, body: { id: existing.id } } : { status: 409, body: { error: `A project with id "${body.id}" exists with other content.` } };
    }
  } else {
    // Without an id the same body again is recognised by its content (as POST /api/sensors does).
    const twins = await db.select({ id: projects.id }).from(projects).where(eq(projects.name, body.name));
    for (const t of twins) {
      const full = await getProject(t.id);
      if (full && (await sameContent(full, p.value))) return { status: 200, body: { id: full.id } };
    }
  }
  const id = body.id ?? crypto.randomUUID();
  const { sensorIds, siteIds, tapeIds, edmIds, ...cols } = contentOf(body, true);
  try {
    await db.transaction(async (tx) => {
      await tx.insert(projects).values({ id, ...cols });
      if (sensorIds.length) await tx.insert(projectSensors).values(sensorIds.map((sensorId) => ({ projectId: id, sensorId })));
      if (siteIds.length) await tx.insert(projectSites).values(siteIds.map((siteId) => ({ projectId: id, siteId })));
      await writeTapeEdmLinks(tx, id, { tapeIds, edmIds }, false);
      if (memberIds.length) await tx.insert(projectMembers).values(memberIds.map((userId) => ({ projectId: id, userId, addedBy: actor.id })));
      await audit(actor.id, "create", "project", id, { id, ...cols, sensorIds, siteIds, tapeIds: tapeIds ?? [], edmIds: edmIds ?? [], memberEmails }, tx);
      for (const [i, userId] of memberIds.entries()) {
        await audit(actor.id, "member.add", "project", id, { userId, email: memberEmails[i], project: cols.name }, tx);
      }
    });
  } catch (e) {
    // A racing twin with the same id: answer as if it had come first.
    if (retry && isConstraintError(e)) return createOnce(actor, raw, false);
    throw e;
  }
  return { status: 201, body: { id } };
}
