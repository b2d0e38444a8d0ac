// The project admin screens through their real loaders and actions (form posts as a browser
// without JavaScript sends them): the default rule, a 400 per bad rule field, linked sensors and
// sites, and a changed coverage factor recomputing the limits of stored shots (L = k·T, ranging.md §4).
import { expect, test } from "vitest";
import { eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { shots } from "~/db/schema";
import { DEFAULT_RULE } from "~/domain";
import { createProject, getProject, getProjectRule } from "~/models/projects.server";
import { createSensor } from "~/models/sensors.server";
import { createSite } from "~/models/sites.server";
import { ingestSync } from "~/models/sync.server";
import * as projectNew from "~/routes/admin.projects.new";
import * as projectEdit from "~/routes/admin.projects.$projectId";
import * as projectList from "~/routes/admin.projects";
import { makeUser, addMemberUsers } from "../support/registry-fixtures";
import { uid, ok, form, req, run, type Fn, type Reply } from "../support/admin-forms";

test("a project with the default rule links its sensors and sites; bad rule fields answer 400 each", async () => {
  const admin = await makeUser("admin");
  const s = await ok(createSensor(null, { label: "Roof scanner", serial: `FH-${uid()}`, kind: "pulsed", wavelengthNm: 905, appliesAirCorrection: true, toleranceMm: 5, tolerancePpm: 10 }));
  const site = await ok(createSite(null, { name: `Range ${uid()}`, targets: [{ label: "T1", reflectancePct: 10 }] }));
  const name = `Corridor ${uid().slice(0, 6)}`;
  const bad = await run(
    projectNew.action as Fn,
    req("/admin/projects/new", admin, form({ name, minShots: "2.5", coverageK: "0", minWithinPct: "101", rangeBandEdgesM: "0, 30, 10", sensorIds: [s.body.id, "no-such-sensor"] })),
  );
  expect(bad.status).toBe(400);
  const { result } = bad.body as Reply;
  expect(result.error.minShots).toEqual(["The minimum number of shots is a whole number"]);
  expect(result.error.coverageK).toEqual(["The coverage factor must be above 0"]);
  expect(result.error.minWithinPct).toEqual(["The share lies between 0 and 100 %"]);
  expect(result.error.rangeBandEdgesM?.[0]).toMatch(/must increase/);
  expect(result.initialValue).toMatchObject({ minShots: "2.5", rangeBandEdgesM: "0, 30, 10" });

  const unknown = await run(projectNew.action as Fn, req("/admin/projects/new", admin, form({ name, sensorIds: [s.body.id, "no-such-sensor"] })));
  expect(unknown.status).toBe(400);
  expect((unknown.body as Reply).result.error["sensorIds[1]"]).toEqual(['No sensor with id "no-such-sensor"']);

  const saved = await run(
    projectNew.action as Fn,
    req(
      "/admin/projects/new",
      admin,
      form({ name, client: "Fernhollow Geomatics", minShots: "20", coverageK: "2", minWithinPct: "95", rangeBandEdgesM: "0, 10, 30, 100", sensorIds: [s.body.id], siteIds: [site.body.id] }),
    ),
  );
  expect(saved.status).toBe(302);
  const list = await run(projectList.loader as Fn, req("/admin/projects", admin));
  const row = (list.body as { projects: { id: string; name: string; sensorLabels: string }[] }).projects.find((p) => p.name === name)!;
  expect(row.sensorLabels).toBe("Roof scanner");
  const full = await getProject(row.id);
  expect(full).toMatchObject({ client: "Fernhollow Geomatics", sensorIds: [s.body.id], siteIds: [site.body.id] });
  expect(await getProjectRule(row.id)).toEqual(DEFAULT_RULE);
  expect(await getProjectRule(null)).toEqual(DEFAULT_RULE);
  expect(await getProjectRule("no-such-project")).toEqual(DEFAULT_RULE);
});

test("changing a project's coverage factor recomputes the limits of its shots (L = k·T)", async () => {
  const [admin, crew] = await Promise.all([makeUser("admin"), makeUser("crew")]);
  const s = await ok(createSensor(null, { label: "Tripod scanner", serial: `FH-${uid()}`, kind: "pulsed", wavelengthNm: 1550, appliesAirCorrection: true, toleranceMm: 3, tolerancePpm: 0 }));
  const site = await ok(createSite(null, { name: `Range ${uid()}`, targets: [{ label: "T1", reflectancePct: 50 }] }));
  const p = await ok(createProject(null, { id: `prj-${uid()}`, name: "Valley road", sensorIds: [s.body.id], siteIds: [site.body.id] }));
  expect(p.status).toBe(201);
  const projectId = p.body.id;
  await addMemberUsers(projectId, [crew]); // issue 14
  const sessionId = uid();
  const shotId = uid();
  await ingestSync(crew, {
    deviceId: "tablet-3",
    sessions: [{ id: sessionId, sensorId: s.body.id, siteId: site.body.id, projectId, startedAt: "2026-05-05T09:00:00+02:00", airTempC: 15, pressureHpa: 1010, humidityPct: 50 }],
    shots: [{ id: shotId, sessionId, takenAt: "2026-05-05T09:05:00+02:00", reference: { method: "edm", distanceM: 20 }, readings: { rangesM: [20.004] }, reflectancePct: 50, illuminanceKlux: 20 }],
  });
  expect((await getDb().select().from(shots).where(eq(shots.id, shotId)))[0]!.limitMm).toBeCloseTo(6, 9); // 2 × 3 mm
  const edit = await run(
    projectEdit.action as Fn,
    req(
      `/admin/projects/${projectId}`,
      admin,
      form({ name: "Valley road", minShots: "20", coverageK: "1", minWithinPct: "95", rangeBandEdgesM: "0, 10, 30, 100", sensorIds: [s.body.id], siteIds: [site.body.id] }),
    ),
    { projectId },
  );
  expect(edit.status).toBe(302);
  expect((await getDb().select().from(shots).where(eq(shots.id, shotId)))[0]!.limitMm).toBeCloseTo(3, 9); // 1 × 3 mm
  expect((await getProjectRule(projectId)).coverageK).toBe(1);

  expect((await run(projectEdit.action as Fn, req(`/admin/projects/${projectId}`, admin, form({ intent: "retire", confirm: "yes" })), { projectId })).status).toBe(302);
  expect((await getProject(projectId))!.retiredAt).not.toBeNull();
  expect((await getProjectRule(projectId)).coverageK).toBe(1);
});
