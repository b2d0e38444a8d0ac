// issue 14 (api.md v1.1): projects scope everything. Two client projects share one sensor and
// one site; a member of one reads a report of that project's shots only, the admin the sensor's
// whole history. A crew tablet's reference data holds only its projects, and a sync into
// another project's sensor and site is refused per record, naming projectId, while the rest of
// the batch is stored. The report figures are compared with the mean of the errors computed
// here from the synced readings (each error = range − reference for a sensor that corrects for
// air itself, ranging.md §1).
import { beforeAll, expect, test } from "vitest";
import { action as syncAction } from "~/routes/api.sync";
import { loader as reportLoader } from "~/routes/api.sensors.$sensorId.report";
import { loader as shotsLoader } from "~/routes/api.shots";
import { loader as referenceLoader } from "~/routes/api.field.reference";
import { createSignOff } from "~/models/signoffs.server";
import { apiRequest, call, makeProject, makeSensor, makeSite, makeTape, makeUser, type TestUser } from "../support/registry-fixtures";
import { syncSession } from "../support/sync-records";

const uid = () => crypto.randomUUID();

let admin: TestUser, crewA: TestUser, crewAB: TestUser, viewerA: TestUser, viewerB: TestUser, qaA: TestUser, outsider: TestUser;
let shared: { id: string }, yard: Awaited<ReturnType<typeof makeSite>>;
let otherSensor: { id: string }, otherSite: Awaited<ReturnType<typeof makeSite>>;
let pA: { id: string }, pB: { id: string }, pC: { id: string };
/** The errors (mm) of the shots stored per project. */
const errorsOf: Record<string, number[]> = {};

const session = syncSession;
const shot = (sessionId: string, distanceM: number, errorMm: number) => ({
  id: uid(),
  sessionId,
  takenAt: "2026-05-04T08:10:00+02:00",
  reference: { method: "edm", distanceM },
  readings: { rangesM: [Math.round((distanceM + errorMm / 1000) * 1e6) / 1e6] },
  reflectancePct: 50,
  illuminanceKlux: 20,
});

async function sync(user: TestUser, body: unknown) {
  const r = await call(syncAction as never, apiRequest("/api/sync", { user, json: body }));
  expect(r.status).toBe(200);
  return r.json.results as { kind: string; id: string; status: string; errors?: { path: string; message: string }[] }[];
}

const report = (user: TestUser, sensorId: string, query = "") => call(reportLoader as never, apiRequest(`/api/sensors/${sensorId}/report${query}`, { user }), { sensorId });

beforeAll(async () => {
  [admin, crewA, crewAB, viewerA, viewerB, qaA, outsider] = await Promise.all([
    makeUser("admin"),
    makeUser("crew"),
    makeUser("crew"),
    makeUser("viewer"),
    makeUser("viewer"),
    makeUser("qa"),
    makeUser("viewer"),
  ]);
  // a sensor that corrects for air itself, so each error is exactly the reading minus the reference
  shared = await makeSensor({ label: "Shared roof scanner", appliesAirCorrection: true, toleranceMm: 5, tolerancePpm: 10 });
  yard = await makeSite({ name: "Shared yard baseline" });
  otherSensor = await makeSensor({ label: "Other client's tripod scanner", appliesAirCorrection: true });
  otherSite = await makeSite({ name: "Other client's test range" });
  await makeTape();
  pA = await makeProject({ name: "Harbour wall", sensorIds: [shared.id], siteIds: [yard.id], memberIds: [crewA.id, crewAB.id, viewerA.id, qaA.id], minShots: 3 });
  pB = await makeProject({ name: "Valley road", sensorIds: [shared.id], siteIds: [yard.id], memberIds: [crewAB.id, viewerB.id], minShots: 3, coverageK: 3 });
  pC = await makeProject({ name: "Quarry face", sensorIds: [otherSensor.id], siteIds: [otherSite.id], memberIds: [] });

  // project A: 5 shots, project B: 3 shots, all of the shared sensor at the shared yard
  const plan: [string, TestUser, number[]][] = [
    [pA.id, crewA, [1.2, -0.8, 2.0, 0.4, -1.1]],
    [pB.id, crewAB, [6.5, 7.1, 5.9]],
  ];
  for (const [projectId, user, errs] of plan) {
    const s = session(shared.id, yard.id, { projectId });
    const list = errs.map((e, i) => shot(s.id, 10 + 5 * i, e));
    const results = await sync(user, { deviceId: `tablet-${projectId}`, sessions: [s], shots: list });
    expect(results.map((r) => r.status)).toEqual(["accepted", ...errs.map(() => "accepted")]);
    errorsOf[projectId] = errs;
  }
});

const mean = (xs: number[]) => xs.reduce((a, b) => a + b, 0) / xs.length;

test("two projects sharing one sensor: a member of one sees a report of that project's shots; the admin the sensor's whole history", async () => {
  const a = await report(viewerA, shared.id);
  expect(a.status).toBe(200);
  expect(a.json.n).toBe(errorsOf[pA.id]!.length);
  expect(a.json.biasMm).toBeCloseTo(mean(errorsOf[pA.id]!), 6);
  // api.md v1.1: the rule of the reader's only project holding the sensor
  expect(a.json.ruleProjectId).toBe(pA.id);

  const b = await report(viewerB, shared.id);
  expect(b.json.n).toBe(errorsOf[pB.id]!.length);
  expect(b.json.biasMm).toBeCloseTo(mean(errorsOf[pB.id]!), 6);
  expect(b.json.ruleProjectId).toBe(pB.id);
  expect(b.json.rule.coverageK).toBe(3);

  const all = await report(admin, shared.id);
  expect(all.json.n).toBe(errorsOf[pA.id]!.length + errorsOf[pB.id]!.length);
  expect(all.json.biasMm).toBeCloseTo(mean([...errorsOf[pA.id]!, ...errorsOf[pB.id]!]), 6);
  // two live projects hold the sensor: the default rule, named null
  expect(all.json.ruleProjectId).toBeNull();

  // a member of both sees both projects' shots
  const both = await report(crewAB, shared.id);
  expect(both.json.n).toBe(8);

  // the other project's rule cannot be asked for by a non-member: 404 as for an unknown project
  const asked = await report(viewerA, shared.id, `?project=${pB.id}`);
  const unknown = await report(viewerA, shared.id, `?project=${uid()}`);
  expect(asked.status).toBe(404);
  expect(unknown.status).toBe(404);

  // someone in neither project: the sensor is not there at all
  const none = await report(outsider, shared.id);
  const missing = await report(outsider, uid());
  expect(none.status).toBe(404);
  expect(none.json.error.replace(shared.id, "{id}")).toBe(missing.json.error.replace(/No sensor [^.]+/, "No sensor {id}"));
});

test("the shot table of the shared sensor holds a member's project's shots only", async () => {
  const page = await call(shotsLoader as never, apiRequest(`/api/shots?sensor=${shared.id}&limit=100`, { user: viewerB }));
  expect(page.status).toBe(200);
  expect(page.json.shots.map((s: { errorMm: number }) => Math.round(s.errorMm * 10) / 10).sort()).toEqual([...errorsOf[pB.id]!].sort());
  const adminPage = await call(shotsLoader as never, apiRequest(`/api/shots?sensor=${shared.id}&limit=100`, { user: admin }));
  expect(adminPage.json.shots).toHaveLength(8);
});

test("a QA member's sign-off carries their project and freezes that project's shots only", async () => {
  const r = await createSignOff({ id: qaA.id, role: "qa" }, shared.id, { decision: "approved", note: "Harbour wall only" });
  const { signOffs } = await import("~/db/schema");
  const { getDb } = await import("~/db/client.server");
  const { eq } = await import("drizzle-orm");
  const [row] = await getDb().select().from(signOffs).where(eq(signOffs.id, r.id));
  expect(row!.projectId).toBe(pA.id);
  expect((row!.snapshot as { n: number }).n).toBe(errorsOf[pA.id]!.length);
  // a project they do not belong to is "no such project"
  await expect(createSignOff({ id: qaA.id, role: "qa" }, shared.id, { decision: "approved", note: "x", projectId: pB.id })).rejects.toThrow(/No such project/);
});

test("a crew tablet's reference data holds only its projects' sensors, sites and rules", async () => {
  const r = await call(referenceLoader as never, apiRequest("/api/field/reference", { user: crewA }));
  expect(r.status).toBe(200);
  const ids = (xs: { id: string }[]) => xs.map((x) => x.id).sort();
  expect(ids(r.json.sensors)).toEqual([shared.id]);
  expect(ids(r.json.sites)).toEqual([yard.id]);
  expect(ids(r.json.projects)).toEqual([pA.id]);
  // issue 14: a tape no project lists travels to no crew's tablet (tapes-scope.test.ts has the rest)
  expect(r.json.tapes).toEqual([]);
  // an admin's tablet gets every project
  const all = await call(referenceLoader as never, apiRequest("/api/field/reference", { user: admin }));
  expect(ids(all.json.projects)).toEqual(expect.arrayContaining([pA.id, pB.id, pC.id]));
  expect(ids(all.json.sensors)).toEqual(expect.arrayContaining([shared.id, otherSensor.id]));
});

test("a sync into another project's sensor and site is refused per record at projectId; the rest of the batch is stored", async () => {
  const good = session(shared.id, yard.id);
  const foreign = session(otherSensor.id, otherSite.id);
  const explicit = session(shared.id, yard.id, { projectId: pC.id });
  const goodShot = shot(good.id, 20, 0.7);
  const foreignShot = shot(foreign.id, 20, 0.3);
  const results = await sync(crewA, { deviceId: "tablet-a", sessions: [good, foreign, explicit], shots: [goodShot, foreignShot] });
  const by = new Map(results.map((r) => [r.id, r]));
  // implied: the shared sensor and yard share exactly one of crewA's projects (A)
  expect(by.get(good.id)!.status).toBe("accepted");
  expect(by.get(goodShot.id)!.status).toBe("accepted");
  expect(by.get(foreign.id)!.status).toBe("rejected");
  expect(by.get(foreign.id)!.errors).toEqual([{ path: "projectId", message: expect.stringMatching(/none of your projects lists both this session's sensor and its site/) }]);
  expect(by.get(foreignShot.id)!.status).toBe("rejected");
  expect(by.get(foreignShot.id)!.errors![0]!.message).toContain(`its session ${foreign.id} was rejected`);
  expect(by.get(explicit.id)!.errors).toEqual([{ path: "projectId", message: expect.stringMatching(/not one of your projects/) }]);

  // a member of both projects must choose: the pair is shared by two of theirs
  const ambiguous = session(shared.id, yard.id);
  const chosen = session(shared.id, yard.id, { projectId: pB.id });
  const r2 = await sync(crewAB, { deviceId: "tablet-ab", sessions: [ambiguous, chosen] });
  expect(r2[0]!.status).toBe("rejected");
  expect(r2[0]!.errors![0]!.path).toBe("projectId");
  expect(r2[0]!.errors![0]!.message).toMatch(/several of your projects \(Harbour wall, Valley road\)/);
  expect(r2[1]!.status).toBe("accepted");

  // a shot into a stored session of another project is as if the session did not exist
  const intoB = shot(chosen.id, 15, 0.2);
  const r3 = await sync(crewA, { deviceId: "tablet-a", shots: [intoB] });
  expect(r3[0]!.status).toBe("rejected");
  expect(r3[0]!.errors![0]!.message).toContain(`session ${chosen.id} is unknown`);
});
