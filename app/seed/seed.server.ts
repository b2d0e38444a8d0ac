// Loads the invented demo (scenario.ts) through the real model functions, exactly as an admin
// and a field tablet would: users, tape, sensors, sites and the project through the registry,
// then the crew's sessions and shots through the server sync, which recomputes every shot.
import { eq, inArray, or } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import {
  apiTokens,
  auditLog,
  authSessions,
  checkSessions,
  edms,
  exclusions,
  importMappings,
  loginCodes,
  photos,
  projectMembers,
  projects,
  projectSensors,
  projectTapes,
  projectEdms,
  projectSites,
  sensors,
  shots,
  signOffs,
  sites,
  stations,
  targets,
  tapes,
  users,
} from "~/db/schema";
import { createProject } from "~/models/projects.server";
import { addMember } from "~/models/members.server";
import { createSensor } from "~/models/sensors.server";
import { createSite } from "~/models/sites.server";
import { ingestSync } from "~/models/sync.server";
import { createTape } from "~/models/tapes.server";
import { createEdm } from "~/models/edms.server";
import { upsertUserFromCli } from "~/models/users.server";
import type { SyncResult } from "~/contract/sync";
import { buildDemoScenario, DEMO_IDS, DEMO_USERS, type DemoScenario, type DemoUser } from "./scenario";

export type SeedSummary = {
  users: (DemoUser & { id: string })[];
  tapes: number;
  sensors: number;
  sites: number;
  targets: number;
  projects: number;
  sessions: number;
  shots: number;
  results: { accepted: number; duplicate: number; rejected: SyncResult[] };
};

/** Shots per sync request: the tablet sends a day at a time, well under api.md's 500 cap. */
const BATCH_SHOTS = 200;

function expectOk(what: string, r: { status: number; body: unknown }): string {
  if (r.status !== 200 && r.status !== 201) {
    throw new Error(`The demo ${what} was refused (${r.status}): ${JSON.stringify(r.body)}`);
  }
  return (r.body as { id: string }).id;
}

/** True when the demo's sensors or users are already in the database. */
export async function demoIsSeeded(): Promise<boolean> {
  const db = getDb();
  const s = await db
    .select({ id: sensors.id })
    .from(sensors)
    .where(inArray(sensors.id, Object.values(DEMO_IDS)))
    .limit(1);
  if (s.length) return true;
  const u = await db
    .select({ id: users.id })
    .from(users)
    .where(
      inArray(
        users.email,
        DEMO_USERS.map((x) => x.email),
      ),
    )
    .limit(1);
  return u.length > 0;
}

export async function seedDemo(scenario: DemoScenario = buildDemoScenario()): Promise<SeedSummary> {
  const seededUsers: SeedSummary["users"] = [];
  for (const u of scenario.users) {
    const r = await upsertUserFromCli({ email: u.email, role: u.role, name: u.name });
    seededUsers.push({ ...u, id: r.id });
  }
  const admin = seededUsers.find((u) => u.role === "admin")!;
  const crew = seededUsers.find((u) => u.role === "crew")!;
  const actor = { id: admin.id };

  expectOk("tape", await createTape(actor, scenario.tape));
  expectOk("reference EDM", await createEdm(actor, scenario.edm));
  for (const s of Object.values(scenario.sensors)) expectOk(`sensor ${s.label}`, await createSensor(actor, s));
  let targetCount = 0;
  for (const site of Object.values(scenario.sites)) {
    expectOk(`site ${site.body.name}`, await createSite(actor, site.body));
    targetCount += site.body.targets.length;
  }
  // issue 14: both client projects, and their members before the crew's tablet syncs into them
  const adminActor = { id: admin.id, role: "admin" as const };
  const idByEmail = new Map(seededUsers.map((u) => [u.email, u.id]));
  for (const { memberEmails, ...body } of scenario.projects) {
    expectOk(`project ${body.name}`, await createProject(actor, body));
    for (const email of memberEmails) expectOk(`member ${email}`, await addMember(adminActor, body.id, idByEmail.get(email)!).then((r) => ({ status: r.status, body: { id: email } })));
  }

  // One sync request per field day (and at most BATCH_SHOTS shots), as a tablet would send them.
  const results: SeedSummary["results"] = { accepted: 0, duplicate: 0, rejected: [] };
  const days = new Map<string, { sessions: DemoScenario["sessions"]; shots: DemoScenario["shots"] }>();
  for (const s of scenario.sessions) {
    const day = s.startedAt.slice(0, 10);
    if (!days.has(day)) days.set(day, { sessions: [], shots: [] });
    days.get(day)!.sessions.push(s);
  }
  const dayOfSession = new Map(scenario.sessions.map((s) => [s.id, s.startedAt.slice(0, 10)]));
  for (const shot of scenario.shots) days.get(dayOfSession.get(shot.sessionId)!)!.shots.push(shot);

  for (const { sessions: ses, shots: sh } of days.values()) {
    const bodies = ses.map(({ sensorKey: _k, siteKey: _s, ...body }) => body);
    for (let i = 0; i === 0 || i < sh.length; i += BATCH_SHOTS) {
      const out = await ingestSync({ id: crew.id, role: crew.role }, { deviceId: scenario.deviceId, sessions: i === 0 ? bodies : [], shots: sh.slice(i, i + BATCH_SHOTS) });
      if (out.status !== 200) throw new Error(`The demo sync was refused (${out.status}): ${JSON.stringify(out.body)}`);
      for (const r of (out.body as { results: SyncResult[] }).results) {
        if (r.status === "accepted") results.accepted++;
        else if (r.status === "duplicate") results.duplicate++;
        else results.rejected.push(r);
      }
    }
  }

  return {
    users: seededUsers,
    tapes: 1,
    sensors: Object.keys(scenario.sensors).length,
    sites: Object.keys(scenario.sites).length,
    targets: targetCount,
    projects: scenario.projects.length,
    sessions: scenario.sessions.length,
    shots: scenario.shots.length,
    results,
  };
}

/**
 * Deletes every row the demo made (and anything hanging off the demo's sensors, sites and
 * users), for `db:seed --reset` on a database that is not a local file. Other rows stay.
 */
export async function deleteDemoRows(scenario: DemoScenario = buildDemoScenario()): Promise<void> {
  const db = getDb();
  const sensorIds = Object.values(scenario.sensors).map((s) => s.id);
  const siteIds = Object.values(scenario.sites).map((s) => s.body.id);
  const emails = scenario.users.map((u) => u.email);
  const userRows = await db.select({ id: users.id }).from(users).where(inArray(users.email, emails));
  const userIds = userRows.map((u) => u.id);
  const sessionRows = await db
    .select({ id: checkSessions.id })
    .from(checkSessions)
    .where(or(inArray(checkSessions.sensorId, sensorIds), inArray(checkSessions.siteId, siteIds)));
  const sessionIds = [...new Set([...sessionRows.map((s) => s.id), ...scenario.sessions.map((s) => s.id)])];
  const shotRows = sessionIds.length ? await db.select({ id: shots.id }).from(shots).where(inArray(shots.sessionId, sessionIds)) : [];
  const shotIds = shotRows.map((s) => s.id);
  const chunks = <T>(xs: T[], n = 400) => Array.from({ length: Math.ceil(xs.length / n) }, (_, i) => xs.slice(i * n, i * n + n));

  await db.transaction(async (tx) => {
    for (const c of chunks(shotIds)) {
      await tx.delete(exclusions).where(inArray(exclusions.shotId, c));
      await tx.delete(photos).where(inArray(photos.shotId, c));
      await tx.delete(shots).where(inArray(shots.id, c));
    }
    for (const c of chunks(sessionIds)) await tx.delete(checkSessions).where(inArray(checkSessions.id, c));
    await tx.delete(signOffs).where(inArray(signOffs.sensorId, sensorIds));
    await tx.delete(importMappings).where(inArray(importMappings.sensorId, sensorIds));
    const projectIds = scenario.projects.map((p) => p.id);
    await tx.delete(projectSensors).where(or(inArray(projectSensors.projectId, projectIds), inArray(projectSensors.sensorId, sensorIds)));
    await tx.delete(projectSites).where(or(inArray(projectSites.projectId, projectIds), inArray(projectSites.siteId, siteIds)));
    // issue 14: the demo projects' tapes and EDMs, and any project's links to the demo tape and EDM
    await tx.delete(projectTapes).where(or(inArray(projectTapes.projectId, projectIds), eq(projectTapes.tapeId, scenario.tape.id)));
    await tx.delete(projectEdms).where(or(inArray(projectEdms.projectId, projectIds), eq(projectEdms.edmId, scenario.edm.id)));
    await tx.delete(projectMembers).where(or(inArray(projectMembers.projectId, projectIds), ...(userIds.length ? [inArray(projectMembers.userId, userIds)] : [])));
    await tx.delete(projects).where(inArray(projects.id, projectIds));
    await tx.delete(targets).where(inArray(targets.siteId, siteIds));
    await tx.delete(stations).where(inArray(stations.siteId, siteIds));
    await tx.delete(sites).where(inArray(sites.id, siteIds));
    await tx.delete(sensors).where(inArray(sensors.id, sensorIds));
    await tx.delete(tapes).where(eq(tapes.id, scenario.tape.id));
    await tx.delete(edms).where(eq(edms.id, scenario.edm.id));
    if (userIds.length) {
      await tx.delete(apiTokens).where(inArray(apiTokens.userId, userIds));
      await tx.delete(authSessions).where(inArray(authSessions.userId, userIds));
      await tx.delete(users).where(inArray(users.id, userIds));
    }
    await tx.delete(loginCodes).where(inArray(loginCodes.email, emails));
    // the demo's own audit rows go with it, so a re-seeded demo reads as made once
    const entityIds = [...sensorIds, ...siteIds, scenario.tape.id, scenario.edm.id, ...scenario.projects.map((p) => p.id), ...userIds];
    await tx.delete(auditLog).where(inArray(auditLog.entityId, entityIds));
  });
}

/** The file behind a `file:` libSQL URL, or null for remote and in-memory databases. */
export function localDatabaseFile(url: string): string | null {
  if (!url.startsWith("file:")) return null;
  const path = url.slice("file:".length).replace(/^\/\/(?=\/)/, "");
  return path === "" || path === ":memory:" ? null : path;
}

/** Lines for a terminal: what the seed loaded and who may sign in. */
export function describeSeed(s: SeedSummary): string[] {
  const lines = [
    `Loaded the Fernhollow Geomatics demo: ${s.sensors} sensors, ${s.sites} sites (${s.targets} targets), ${s.tapes} steel tape, ${s.projects} client projects,`,
    `${s.sessions} sessions and ${s.shots} shots (sync: ${s.results.accepted} accepted, ${s.results.duplicate} already had, ${s.results.rejected.length} rejected).`,
  ];
  for (const r of s.results.rejected) lines.push(`  rejected ${r.kind} ${r.id}: ${(r.errors ?? []).map((e) => `${e.path} ${e.message}`).join("; ")}`);
  return lines;
}
