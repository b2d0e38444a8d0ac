import { expect, test } from "vitest";
import { loader } from "~/routes/api.field.reference";
import { loader as fieldLoader } from "~/routes/field";
import { apiRequest, call, makeProject, makeSensor, makeSite, makeTape, makeUser } from "../support/registry-fixtures";
import { getDb } from "~/db/client.server";
import { sensors } from "~/db/schema";
import { eq } from "drizzle-orm";

test("a crew member gets their project's active sensors, sites (stations, targets), the tapes and the project rule, and who they are", async () => {
  const crew = await makeUser("crew");
  const sensor = await makeSensor({ label: "Tripod scanner T2", kind: "cw", modulationHz: [20e6, 2.5e6] });
  const retired = await makeSensor({ label: "Old scanner" });
  await getDb().update(sensors).set({ retiredAt: new Date().toISOString() }).where(eq(sensors.id, retired.id));
  const site = await makeSite({
    name: "Fernhollow yard baseline",
    stations: [{ label: "S1", grid: { e: 100, n: 200, h: 10 } }],
    targets: [{ label: "Dark board", reflectancePct: 10, referenceM: 12.5, geo: { lat: 10, lon: -30, h: 50 } }],
  });
  const tape = await makeTape({ label: "Steel tape 30 m" });
  const project = await makeProject({ sensorIds: [sensor.id], siteIds: [site.id], tapeIds: [tape.id], minShots: 30, coverageK: 2.5, memberIds: [crew.id] });

  const res = await call(loader as never, apiRequest("/api/field/reference", { user: crew }));
  expect(res.status).toBe(200);
  expect(res.headers.get("Cache-Control")).toBe("no-store");
  const body = res.json;
  expect(body.user).toMatchObject({ id: crew.id, role: "crew", email: crew.email });
  const s = body.sensors.find((x: { id: string }) => x.id === sensor.id);
  expect(s).toMatchObject({ label: "Tripod scanner T2", kind: "cw", modulationHz: [20e6, 2.5e6], toleranceMm: 5, tolerancePpm: 10 });
  expect(body.sensors.some((x: { id: string }) => x.id === retired.id)).toBe(false);
  const y = body.sites.find((x: { id: string }) => x.id === site.id);
  expect(y.stations).toEqual([{ id: site.stations[0]!.id, label: "S1", grid: { e: 100, n: 200, h: 10 }, geo: null }]);
  expect(y.targets[0]).toMatchObject({ label: "Dark board", reflectancePct: 10, referenceM: 12.5, retro: false, grid: null, geo: { lat: 10, lon: -30, h: 50 } });
  expect(body.tapes.find((x: { id: string }) => x.id === tape.id)).toMatchObject({ standardTempC: 20, standardTensionN: 50, areaMm2: 2.6 });
  const p = body.projects.find((x: { id: string }) => x.id === project.id);
  expect(p).toMatchObject({ rule: { minShots: 30, coverageK: 2.5, minWithinPct: 95, rangeBandEdgesM: [0, 10, 30, 100] }, sensorIds: [sensor.id], siteIds: [site.id], tapeIds: [tape.id], edmIds: [] });
  expect(Number.isNaN(Date.parse(body.copiedAt))).toBe(false);
});

test("the reference data answers 401 without sign-in and 403 to a viewer", async () => {
  const viewer = await makeUser("viewer");
  expect((await call(loader as never, apiRequest("/api/field/reference"))).status).toBe(401);
  const res = await call(loader as never, apiRequest("/api/field/reference", { user: viewer }));
  expect(res.status).toBe(403);
  expect(res.json.error).toMatch(/viewer/);
});

test("the field pages' guard lets crew, qa and admin in, sends others to sign-in or refuses them", async () => {
  for (const role of ["crew", "qa", "admin"] as const) {
    const u = await makeUser(role);
    const out = (await fieldLoader({ request: apiRequest("/field", { user: u }), params: {}, context: {} } as never)) as { user: { role: string } };
    expect(out.user.role).toBe(role);
  }
  const viewer = await makeUser("viewer");
  expect((await call(fieldLoader as never, apiRequest("/field/outbox", { user: viewer }))).status).toBe(403);
  const anon = await call(fieldLoader as never, apiRequest("/field/outbox"));
  expect(anon.status).toBe(302);
  expect(anon.headers.get("Location")).toBe("/login?redirectTo=%2Ffield%2Foutbox");
});
