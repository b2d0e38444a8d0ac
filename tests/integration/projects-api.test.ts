// POST /api/projects (api.md v1.1) through the real action against the per-file database:
// 201 / 200 (same body) / 400 (field errors with their paths, the rule's nested under `rule.`) /
// 401 / 403 / 409, members resolved by e-mail, the rule's defaults (ranging.md §6) when left out,
// and the audit trail written.
import { expect, test } from "vitest";
import { and, eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { auditLog, projectMembers, projects } from "~/db/schema";
import { DEFAULT_RULE } from "~/domain";
import { getProject } from "~/models/projects.server";
import { action as projectsAction } from "~/routes/api.projects";
import { apiRequest, call, makeSensor, makeSite, makeUser } from "../support/registry-fixtures";

const uid = () => crypto.randomUUID();
const post = (opts: Parameters<typeof apiRequest>[1]) => call(projectsAction as never, apiRequest("/api/projects", { method: "POST", ...opts }));

async function world() {
  const admin = await makeUser("admin");
  const crew = await makeUser("crew");
  const viewer = await makeUser("viewer", `viewer-${uid().slice(0, 6)}@alderbrook-roads.test`);
  const sensor = await makeSensor({ label: "Roof scanner R1" });
  const site = await makeSite({ name: "Fernhollow yard baseline" });
  return { admin, crew, viewer, sensor, site };
}

test("without a token 401, and every role but admin 403, before the body is looked at", async () => {
  expect((await post({ json: { nonsense: true } })).status).toBe(401);
  for (const role of ["crew", "qa", "viewer"] as const) {
    const r = await post({ user: await makeUser(role), json: { bad: 1 } });
    expect(r.status, role).toBe(403);
    expect(r.json.errors).toBeUndefined();
  }
});

test("a project is created (201) with its links, members and rule; the same body again is 200; other content under its id is 409", async () => {
  const w = await world();
  const id = `alderbrook-${uid().slice(0, 6)}`;
  const body = {
    id,
    name: "Alderbrook bypass corridor",
    client: "Alderbrook Roads Authority",
    sensorIds: [w.sensor.id],
    siteIds: [w.site.id],
    // Upper case and spaces: addresses are compared as the sign-in compares them.
    memberEmails: [` ${w.crew.email.toUpperCase()} `, w.viewer.email],
    rule: { minShots: 30, coverageK: 1.96, minWithinPct: 90, rangeBandEdgesM: [0, 20, 50], statement: "nssda95", edmUncertaintyMm: 1, edmUncertaintyPpm: 1.5 },
  };
  const a = await post({ user: w.admin, json: body });
  expect(a.status).toBe(201);
  expect(a.json).toEqual({ id });

  const stored = await getProject(id);
  expect(stored).toMatchObject({
    name: "Alderbrook bypass corridor",
    client: "Alderbrook Roads Authority",
    minShots: 30,
    coverageK: 1.96,
    minWithinPct: 90,
    rangeBandEdgesM: [0, 20, 50],
    statement: "nssda95",
    edmUncertaintyMm: 1,
    edmUncertaintyPpm: 1.5,
    sensorIds: [w.sensor.id],
    siteIds: [w.site.id],
  });
  const members = await getDb().select().from(projectMembers).where(eq(projectMembers.projectId, id));
  expect(members.map((m) => m.userId).sort()).toEqual([w.crew.id, w.viewer.id].sort());
  expect(members.every((m) => m.addedBy === w.admin.id)).toBe(true);

  const rows = await getDb()
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.entity, "project"), eq(auditLog.entityId, id)));
  expect(rows.filter((r) => r.action === "create")).toHaveLength(1);
  expect(
    rows
      .filter((r) => r.action === "member.add")
      .map((r) => (r.detail as { email: string }).email)
      .sort(),
  ).toEqual([w.crew.email, w.viewer.email].sort());

  // The same body again (members in another order): 200, nothing new written.
  const again = await post({ user: w.admin, json: { ...body, memberEmails: [w.viewer.email, w.crew.email] } });
  expect(again.status).toBe(200);
  expect(again.json).toEqual({ id });
  expect(
    await getDb()
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.entity, "project"), eq(auditLog.entityId, id))),
  ).toHaveLength(rows.length);

  // Same id, other members / other rule: 409, and the stored project stays as it was.
  const fewer = await post({ user: w.admin, json: { ...body, memberEmails: [w.crew.email] } });
  expect(fewer.status).toBe(409);
  expect(fewer.json.error).toMatch(/exists with other content/);
  const otherRule = await post({ user: w.admin, json: { ...body, rule: { ...body.rule, minShots: 31 } } });
  expect(otherRule.status).toBe(409);
  expect((await getDb().select().from(projectMembers).where(eq(projectMembers.projectId, id))).length).toBe(2);
  expect((await getProject(id))!.minShots).toBe(30);
});

test("without an id the server makes one, the rule takes ranging.md §6's defaults, and the same body again answers the same id", async () => {
  const w = await world();
  const body = { name: `Kestrel quarry survey ${uid().slice(0, 4)}`, sensorIds: [w.sensor.id], siteIds: [], memberEmails: [] };
  const a = await post({ user: w.admin, json: body });
  expect(a.status).toBe(201);
  const stored = await getProject(a.json.id);
  // DEFAULT_RULE is the domain's copy of ranging.md §6 (20 shots, k = 2, 95 %, bands 0/10/30/100 m).
  expect(stored).toMatchObject({
    client: "",
    minShots: DEFAULT_RULE.minShots,
    coverageK: DEFAULT_RULE.coverageK,
    minWithinPct: DEFAULT_RULE.minWithinPct,
    rangeBandEdgesM: DEFAULT_RULE.rangeBandEdgesM,
    statement: "rmse",
    edmUncertaintyMm: null,
  });
  const again = await post({ user: w.admin, json: body });
  expect(again).toMatchObject({ status: 200, json: { id: a.json.id } });
  expect(await getDb().select().from(projects).where(eq(projects.name, body.name))).toHaveLength(1);
});

test("400 names every bad field by its path: unknown sensor and site ids, addresses of no user, bad rule fields; nothing is written", async () => {
  const w = await world();
  const name = `Bad project ${uid().slice(0, 4)}`;
  const r = await post({
    user: w.admin,
    json: {
      name,
      sensorIds: [w.sensor.id, "no-such-sensor"],
      siteIds: ["no-such-site"],
      memberEmails: [w.crew.email, "nobody@alderbrook-roads.test"],
      rule: {},
    },
  });
  expect(r.status).toBe(400);
  expect(r.json.errors).toEqual([
    { path: "sensorIds.1", message: 'No sensor with id "no-such-sensor"' },
    { path: "siteIds.0", message: 'No site with id "no-such-site"' },
    { path: "memberEmails.1", message: 'No user with the e-mail address "nobody@alderbrook-roads.test": invite them first' },
  ]);

  const shape = await post({
    user: w.admin,
    json: { name: "", sensorIds: "R1", memberEmails: ["not an address"], rule: { minShots: 1, coverageK: "two", statement: "rms", rangeBandEdgesM: [5, 10] } },
  });
  expect(shape.status).toBe(400);
  const paths = (shape.json.errors as { path: string }[]).map((e) => e.path).sort();
  expect(paths).toEqual(["memberEmails.0", "name", "rule.coverageK", "rule.minShots", "rule.rangeBandEdgesM", "rule.statement", "sensorIds"].sort());
  const msg = (p: string) => (shape.json.errors as { path: string; message: string }[]).find((e) => e.path === p)!.message;
  expect(msg("rule.minShots")).toMatch(/At least 2 shots/);
  expect(msg("rule.rangeBandEdgesM")).toMatch(/first edge must be 0 m/);

  const notJson = await call(projectsAction as never, apiRequest("/api/projects", { method: "POST", user: w.admin, body: "{nope", headers: { "Content-Type": "application/json" } }));
  expect(notJson.status).toBe(400);
  expect(await getDb().select().from(projects).where(eq(projects.name, name))).toHaveLength(0);
});
