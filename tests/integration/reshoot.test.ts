// Re-shoot requests (issue 12) through the real review page action and the tablet's reference
// data: validation keeps what was typed, the request is scoped to the projects holding its
// sensor and site, QA closes it, and every step lands in the audit trail.
import { expect, test } from "vitest";
import { and, eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { auditLog, projectMembers, reshootRequests } from "~/db/schema";
import * as sensorPage from "~/routes/review.sensors.$sensorId";
import { loader as referenceLoader } from "~/routes/api.field.reference";
import { answerOf, args } from "./auth-helpers";
import { apiRequest, call, makeProject, makeSensor, makeSite, makeUser, type TestUser } from "../support/registry-fixtures";

function post(user: TestUser, sensorId: string, fields: Record<string, string>) {
  const request = new Request(`http://localhost/review/sensors/${sensorId}`, {
    method: "POST",
    headers: { Authorization: `Bearer ${user.token}`, "Content-Type": "application/x-www-form-urlencoded" },
    body: new URLSearchParams(fields),
  });
  return answerOf(() => sensorPage.action(args(request, { sensorId })));
}

type Reply = {
  reshootResult?: { initialValue?: Record<string, unknown>; error?: Record<string, string[] | null> };
  reshootStateResult?: { error?: Record<string, string[] | null> };
  reshoot?: { id: string; state: string; siteName: string; byName: string } | null;
  reshootState?: { id: string; state: string; closedByName: string | null } | null;
};

async function world() {
  const sensor = await makeSensor({ label: "Roof scanner R1" });
  const site = await makeSite({ name: "Roadside test range", targets: [{ label: "Dark board 40 m", reflectancePct: 10, referenceM: 40 }] });
  const otherSite = await makeSite({ name: "Yard baseline" });
  const project = await makeProject({ name: "Valley road corridor", sensorIds: [sensor.id], siteIds: [site.id] });
  const qa = await makeUser("qa");
  const crew = await makeUser("crew");
  const outsider = await makeUser("crew");
  const db = getDb();
  await db.insert(projectMembers).values([
    { projectId: project.id, userId: qa.id },
    { projectId: project.id, userId: crew.id },
  ]);
  return { sensor, site, otherSite, project, qa, crew, outsider };
}

async function tabletCopy(user: TestUser) {
  const res = await call(referenceLoader as never, apiRequest("/api/field/reference", { user }));
  expect(res.status).toBe(200);
  return res.json.reshoots as { id: string; sensorId: string; siteId: string; wanted: string; reason: string; byName: string }[];
}

test("a request without what or why is refused with the field's message and keeps what was typed", async () => {
  const w = await world();
  const a = await post(w.qa, w.sensor.id, { intent: "reshoot", siteId: w.site.id, wanted: "dark board at 40 m, 5 shots", reason: "" });
  expect(a.status).toBe(400);
  const body = a.body as Reply;
  expect(body.reshootResult?.error?.reason?.[0]).toMatch(/why/i);
  expect(body.reshootResult?.initialValue).toMatchObject({ wanted: "dark board at 40 m, 5 shots", siteId: w.site.id });
  expect(await getDb().select().from(reshootRequests).where(eq(reshootRequests.sensorId, w.sensor.id))).toHaveLength(0);
});

test("a site no project of the requester holds with the sensor is refused on the site field", async () => {
  const w = await world();
  const a = await post(w.qa, w.sensor.id, { intent: "reshoot", siteId: w.otherSite.id, wanted: "grey board at 12 m", reason: "the last session lacks it" });
  expect(a.status).toBe(400);
  expect((a.body as Reply).reshootResult?.error?.siteId?.[0]).toMatch(/listed sites|holds both/);
});

test("crew and viewers may not send requests", async () => {
  const w = await world();
  for (const role of ["crew", "viewer"] as const) {
    const u = role === "crew" ? w.crew : await makeUser("viewer");
    const a = await post(u, w.sensor.id, { intent: "reshoot", siteId: w.site.id, wanted: "dark board at 40 m", reason: "bias near the limit" });
    expect(a.status).toBe(403);
  }
});

test("QA's request reaches the reference data of the project's crew only, and leaves it once marked done; each step is audited", async () => {
  const w = await world();
  const a = await post(w.qa, w.sensor.id, {
    intent: "reshoot",
    siteId: w.site.id,
    projectId: w.project.id,
    wanted: "dark board at 40 m, 5 shots in bright sun",
    reason: "the bias on dark targets is near the limit",
  });
  expect(a.status).toBe(200);
  const made = (a.body as Reply).reshoot!;
  expect(made).toMatchObject({ state: "open", siteName: "Roadside test range", byName: "Fixture qa" });

  const crewSees = await tabletCopy(w.crew);
  expect(crewSees).toEqual([
    expect.objectContaining({
      id: made.id,
      sensorId: w.sensor.id,
      siteId: w.site.id,
      wanted: "dark board at 40 m, 5 shots in bright sun",
      reason: "the bias on dark targets is near the limit",
      byName: "Fixture qa",
    }),
  ]);
  // Not a member of the project: the request does not exist for them.
  expect((await tabletCopy(w.outsider)).some((r) => r.id === made.id)).toBe(false);
  const hidden = await post(w.outsider, w.sensor.id, { intent: "reshoot-state", requestId: made.id, state: "done" });
  expect(hidden.status).toBe(403); // crew may not close at all

  const otherQa = await makeUser("qa");
  const notFound = await post(otherQa, w.sensor.id, { intent: "reshoot-state", requestId: made.id, state: "withdrawn" });
  expect(notFound.status).toBe(404);

  const list = await sensorPage.loader(args(apiRequest(`/review/sensors/${w.sensor.id}`, { user: w.qa }), { sensorId: w.sensor.id }));
  expect((list as { reshoots: { id: string; state: string }[] }).reshoots).toEqual([expect.objectContaining({ id: made.id, state: "open" })]);
  const outsiderQaView = await sensorPage.loader(args(apiRequest(`/review/sensors/${w.sensor.id}`, { user: otherQa }), { sensorId: w.sensor.id })).catch((e: unknown) => e);
  if (!(outsiderQaView instanceof Response)) expect((outsiderQaView as { reshoots: unknown[] }).reshoots).toEqual([]);

  const done = await post(w.qa, w.sensor.id, { intent: "reshoot-state", requestId: made.id, state: "done" });
  expect(done.status).toBe(200);
  expect((done.body as Reply).reshootState).toMatchObject({ state: "done", closedByName: "Fixture qa" });
  expect((await tabletCopy(w.crew)).some((r) => r.id === made.id)).toBe(false);

  const again = await post(w.qa, w.sensor.id, { intent: "reshoot-state", requestId: made.id, state: "withdrawn" });
  expect(again.status).toBe(400);
  expect((again.body as Reply).reshootStateResult?.error?.state?.[0]).toMatch(/already done/);

  const trail = await getDb()
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.entity, "reshoot_request"), eq(auditLog.entityId, made.id)));
  expect(trail.map((r) => r.action).sort()).toEqual(["reshoot.done", "reshoot.request"]);
  expect(trail.every((r) => r.actorUserId === w.qa.id)).toBe(true);
});

test("an admin may send a request for a sensor and site no project holds; only admins see it", async () => {
  const sensor = await makeSensor({ label: "Depth camera D1" });
  const site = await makeSite({ name: "Workshop wall" });
  const admin = await makeUser("admin");
  const a = await post(admin, sensor.id, { intent: "reshoot", siteId: site.id, wanted: "white board at 2 m", reason: "new firmware" });
  expect(a.status).toBe(200);
  const id = (a.body as Reply).reshoot!.id;
  expect((await tabletCopy(admin)).some((r) => r.id === id)).toBe(true);
  expect((await tabletCopy(await makeUser("crew"))).some((r) => r.id === id)).toBe(false);
});
