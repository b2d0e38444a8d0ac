// Issue 14, the project verification report: a numbered document whose versions follow its
// content (same content → same version; an exclusion, a new shot or a rule change → a new one,
// the older kept with its hash), the hash recomputing from the stored text (SHA-256 of RFC 8785
// canonical JSON, checked with node:crypto and the canonicalize package), the zip bundle
// unpacked with fflate, the GeoJSON checked with @turf/turf's invariant checks, the statement
// style of the rule, and access: members and admins only, everyone else 404.
import { createHash } from "node:crypto";
import { beforeAll, expect, test } from "vitest";
import { unzipSync, strFromU8 } from "fflate";
import Papa from "papaparse";
import canonicalize from "canonicalize";
import { booleanValid, collectionOf, getCoord } from "@turf/turf";
import { eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { projectMembers, projects, shots as shotsTable } from "~/db/schema";
import { excludeShot } from "~/models/exclusions.server";
import { ingestSync } from "~/models/sync.server";
import { currentProjectReport, listProjectReportVersions, projectReportVersion } from "~/models/project-report.server";
import { loader as reportApi } from "~/routes/api.projects.$projectId.report";
import { loader as bundleApi } from "~/routes/api.projects.$projectId.bundle[.]zip";
import { loader as geojsonApi } from "~/routes/api.projects.$projectId.shots[.]geojson";
import { loader as pageLoader } from "~/routes/review.projects.$projectId.report";
import { action as photoAction } from "~/routes/api.photos";
import { reviewWorld, type ReviewWorld } from "../support/review-fixtures";
import { apiRequest, call, makeUser, type TestUser } from "../support/registry-fixtures";

// a 2×2 PNG (the photo test's own)
const PNG = Buffer.from("iVBORw0KGgoAAAANSUhEUgAAAAIAAAACCAYAAABytg0kAAAAEklEQVR4AWIyXlX+H4SZGKAAAAAA///5ejD3AAAABklEQVQDADzYBKuqbfebAAAAAElFTkSuQmCC", "base64");

let w: ReviewWorld;
let outsider: TestUser;
const sha = (text: string) => createHash("sha256").update(text, "utf8").digest("hex");

beforeAll(async () => {
  w = await reviewWorld();
  outsider = await makeUser("viewer");
  const db = getDb();
  for (const u of [w.users.viewer, w.users.qa, w.users.crew]) await db.insert(projectMembers).values({ projectId: w.project.id, userId: u.id }).onConflictDoNothing();
}, 60_000);

const viewer = () => ({ id: w.users.viewer.id, role: "viewer" as const });

test("the same content is the same version; the stored text hashes to the printed SHA-256", async () => {
  const a = await currentProjectReport(viewer(), w.project.id);
  const b = await currentProjectReport(viewer(), w.project.id);
  expect(a!.version).toBe(1);
  expect(b!.version).toBe(1);
  expect(b!.sha256).toBe(a!.sha256);
  expect(await listProjectReportVersions(viewer(), w.project.id)).toHaveLength(1);
  // the hash recomputes from the stored content, and the stored text is its own canonical form
  expect(sha(a!.text)).toBe(a!.sha256);
  expect(canonicalize(JSON.parse(a!.text))).toBe(a!.text);
  expect(a!.number).toMatch(/^SB-[A-Z0-9-]+-v1$/);
  // every sensor of the project, n = that project's shots of the sensor
  const n = Object.fromEntries(a!.content.sensors.map((s) => [s.id, s.figures?.n]));
  expect(n).toEqual({ [w.failing.id]: w.shotsOf(w.failing.id).length, [w.passing.id]: w.shotsOf(w.passing.id).length });
  expect(a!.content.sessions).toHaveLength(w.sessions.length);
  expect(a!.content.totals.shots).toBe(w.shots.length);
});

test("an exclusion, then a new shot, each make a new version; older versions stay retrievable with their hash", async () => {
  const v1 = (await currentProjectReport(viewer(), w.project.id))!;
  const target = w.shotsOf(w.failing.id)[0]!;
  const ex = await excludeShot({ id: w.users.qa.id, role: "qa" }, target.id, { reason: "board knocked over by the wind" });
  expect(ex.status).toBe(200);
  const v2 = (await currentProjectReport(viewer(), w.project.id))!;
  expect(v2.version).toBe(v1.version + 1);
  expect(v2.sha256).not.toBe(v1.sha256);
  expect(v2.content.exclusions.map((e) => [e.shotId, e.reason, e.restoredAt])).toEqual([[target.id, "board knocked over by the wind", null]]);
  expect(v2.content.sensors.find((s) => s.id === w.failing.id)!.figures!.excluded).toBe(1);

  // a new shot in an existing session of the project
  const session = w.sessions.find((s) => s.sensorId === w.passing.id)!;
  const shotId = crypto.randomUUID();
  const answer = await ingestSync(w.users.crew, {
    deviceId: "tablet-late",
    shots: [
      {
        id: shotId,
        sessionId: session.id,
        takenAt: "2026-05-04T11:59:00+02:00",
        targetId: w.darkTargetId,
        reference: { method: "edm", distanceM: 20 },
        readings: { rangesM: [20.0007] },
        reflectancePct: 10,
        illuminanceKlux: 6,
        position: { lat: 10.0002, lon: -30.0, accuracyM: 3 },
      },
    ],
  });
  expect((answer.body as { results: { status: string }[] }).results.map((r) => r.status)).toEqual(["accepted"]);
  const v3 = (await currentProjectReport(viewer(), w.project.id))!;
  expect(v3.version).toBe(v2.version + 1);
  expect(v3.content.totals.shots).toBe(w.shots.length + 1);

  // the older versions as they were, each hash recomputing from its stored text
  const old1 = (await projectReportVersion(viewer(), w.project.id, v1.version))!;
  expect(old1.sha256).toBe(v1.sha256);
  expect(sha(old1.text)).toBe(v1.sha256);
  expect(old1.content.exclusions).toEqual([]);
  const old2 = (await projectReportVersion(viewer(), w.project.id, v2.version))!;
  expect(sha(old2.text)).toBe(v2.sha256);
  expect(old2.content.totals.shots).toBe(w.shots.length);
  const list = (await listProjectReportVersions(viewer(), w.project.id))!;
  expect(list.map((v) => [v.version, v.sha256])).toEqual([
    [v3.version, v3.sha256],
    [v2.version, v2.sha256],
    [v1.version, v1.sha256],
  ]);

  // the API answers a stored version with the same hash
  const api = await call(reportApi, apiRequest(`/api/projects/${w.project.id}/report?version=${v1.version}`, { user: w.users.viewer }), { projectId: w.project.id });
  expect(api.status).toBe(200);
  expect(api.json).toMatchObject({ version: v1.version, sha256: v1.sha256, current: false });
  expect(sha(canonicalize(api.json.content)!)).toBe(v1.sha256);
  expect((await call(reportApi, apiRequest(`/api/projects/${w.project.id}/report?version=99`, { user: w.users.viewer }), { projectId: w.project.id })).status).toBe(404);
  expect((await call(reportApi, apiRequest(`/api/projects/${w.project.id}/report?version=abc`, { user: w.users.viewer }), { projectId: w.project.id })).status).toBe(400);
});

test("the statement follows the rule: RMSE with n and the reference by default, the NSSDA 95 % figure with nssda95", async () => {
  const db = getDb();
  const rmse = (await currentProjectReport(viewer(), w.project.id))!;
  expect(rmse.content.rule.statement).toBe("rmse");
  for (const s of rmse.content.sensors) {
    const f = s.figures!;
    // ranging.md §7: "Tested … range RMSE against n check-shots, reference …"; the EDM references here have no uncertainty → not included
    expect(s.statementSentence).toBe(
      `Tested ${f.rmseMm!.toFixed(1)} mm range RMSE against ${f.n} check-shots, reference not included (its uncertainty is unknown for ${f.referenceUnknownN} check-shots).`,
    );
  }
  // the rule now names an EDM uncertainty: the reference enters in quadrature (ASPRS Edition 2, 2023)
  await db.update(projects).set({ edmUncertaintyMm: 1, edmUncertaintyPpm: 0 }).where(eq(projects.id, w.project.id));
  const { recomputeShotsForProject } = await import("~/models/recompute.server");
  await recomputeShotsForProject(w.project.id);
  const withRef = (await currentProjectReport(viewer(), w.project.id))!;
  expect(withRef.version).toBe(rmse.version + 1);
  for (const s of withRef.content.sensors) {
    const f = s.figures!;
    // u_ref = 1 mm on every shot → reference RMS 1 mm; combined √(RMSE² + 1²)
    expect(f.referenceRmseMm).toBeCloseTo(1, 12);
    expect(f.rmseCombinedMm).toBeCloseTo(Math.hypot(f.rmseMm!, 1), 12);
    expect(s.statementSentence).toBe(`Tested ${Math.hypot(f.rmseMm!, 1).toFixed(1)} mm range RMSE against ${f.n} check-shots, reference included.`);
  }
  await db.update(projects).set({ statement: "nssda95" }).where(eq(projects.id, w.project.id));
  const nssda = (await currentProjectReport(viewer(), w.project.id))!;
  expect(nssda.version).toBe(withRef.version + 1);
  expect(nssda.content.rule.statement).toBe("nssda95");
  for (const s of nssda.content.sensors) {
    const f = s.figures!;
    // FGDC-STD-007.3-1998 (NSSDA), one dimension (as its vertical accuracy): 95 % = 1.9600 × RMSE
    expect(f.accuracy95Mm).toBeCloseTo(1.96 * f.rmseMm!, 9);
    expect(s.statementSentence).toBe(`Tested ${(1.96 * f.rmseMm!).toFixed(1)} mm range accuracy at 95 % confidence level (NSSDA) against ${f.n} check-shots, reference not included.`);
  }
  // the page loader shows the same version
  const page = (await pageLoader({ request: apiRequest(`/review/projects/${w.project.id}/report`, { user: w.users.viewer }), params: { projectId: w.project.id }, context: {} } as never)) as {
    shown: { version: number; content: { rule: { statement: string } } };
  };
  expect(page.shown.version).toBe(nssda.version);
  await db.update(projects).set({ statement: "rmse" }).where(eq(projects.id, w.project.id));
});

test("the CSV bundle: one shots.csv row per shot of the project, a summary row per sensor, the photos inside", async () => {
  const shot = w.shotsOf(w.passing.id)[2]!;
  const form = new FormData();
  form.set("shotId", shot.id);
  form.set("file", new File([PNG], "board.png", { type: "image/png" }));
  const up = await call(photoAction, apiRequest("/api/photos", { user: w.users.crew, method: "POST", body: form }));
  expect(up.status).toBe(201);
  const photoId = up.json.photo.id as string;

  const req = apiRequest(`/api/projects/${w.project.id}/bundle.zip`, { user: w.users.viewer });
  const res = (await bundleApi({ request: req, params: { projectId: w.project.id }, context: {} } as never)) as Response;
  expect(res.status).toBe(200);
  expect(res.headers.get("Content-Type")).toBe("application/zip");
  expect(res.headers.get("Content-Disposition")).toMatch(/^attachment; filename="SB-[A-Za-z0-9-]+-v\d+-bundle\.zip"$/);
  const files = unzipSync(new Uint8Array(await res.arrayBuffer()));
  expect(Object.keys(files).sort()).toEqual(["README.txt", `photos/${shot.id}-${photoId}.png`, "report.json", "shots.csv", "summary.csv"].sort());

  const projectShots = await getDb().select({ id: shotsTable.id }).from(shotsTable);
  const expected = new Set(w.shots.map((s) => s.id));
  const rows = Papa.parse<string[]>(strFromU8(files["shots.csv"]!).trim(), { skipEmptyLines: true }).data;
  expect(rows[1]![rows[0]!.indexOf("errorMm")]).toBe("mm"); // units row
  const ids = rows.slice(2).map((r) => r[0]!);
  // the fixture's shots and the one added above
  expect(ids.length).toBe(w.shots.length + 1);
  for (const id of expected) expect(ids).toContain(id);
  expect(ids.every((id) => projectShots.some((p) => p.id === id))).toBe(true);
  const photoCol = rows[0]!.indexOf("photos");
  expect(rows.find((r) => r[0] === shot.id)![photoCol]).toBe(`photos/${shot.id}-${photoId}.png`);
  const reasonCol = rows[0]!.indexOf("exclusionReason");
  expect(
    rows
      .slice(2)
      .filter((r) => r[reasonCol])
      .map((r) => r[reasonCol]),
  ).toEqual(["board knocked over by the wind"]);

  expect(Buffer.from(files[`photos/${shot.id}-${photoId}.png`]!).equals(PNG)).toBe(true);
  const summary = Papa.parse<string[]>(strFromU8(files["summary.csv"]!).trim(), { skipEmptyLines: true }).data;
  expect(summary).toHaveLength(1 + 2);
  const report = strFromU8(files["report.json"]!);
  expect(sha(report)).toBe(res.headers.get("X-Report-Sha256"));
  expect(summary[1]![summary[0]!.indexOf("sha256")]).toBe(res.headers.get("X-Report-Sha256"));
});

test("the GeoJSON is a valid FeatureCollection of the project's located shots and sites", async () => {
  const a = await call(geojsonApi, apiRequest(`/api/projects/${w.project.id}/shots.geojson`, { user: w.users.viewer }), { projectId: w.project.id });
  expect(a.status).toBe(200);
  expect(a.headers.get("Content-Type")).toBe("application/geo+json; charset=utf-8");
  const fc = a.json;
  // @turf/invariant: throws unless a FeatureCollection of Point features
  expect(() => collectionOf(fc, "Point", "project GeoJSON")).not.toThrow();
  for (const f of fc.features) {
    expect(booleanValid(f)).toBe(true);
    const [lon, lat] = getCoord(f);
    expect(Math.abs(lon!)).toBeLessThanOrEqual(180);
    expect(Math.abs(lat!)).toBeLessThanOrEqual(90);
  }
  const shotFeatures = fc.features.filter((f: { properties: { kind: string } }) => f.properties.kind === "shot");
  expect(shotFeatures).toHaveLength(w.shots.length + 1); // every fixture shot has a position, and so has the late one
  // RFC 7946 order: [lon, lat]; the fixture's yard lies at lat 10, lon −30
  expect(getCoord(shotFeatures[0])[1]).toBeGreaterThan(9.99);
  expect(getCoord(shotFeatures[0])[0]).toBeLessThan(-29.99);
  const current = (await currentProjectReport(viewer(), w.project.id))!;
  expect(fc.document).toEqual({ number: current.number, projectId: w.project.id, version: current.version, sha256: current.sha256 });
});

test("access: members of any role and admins read it; a non-member and an unknown project get 404", async () => {
  const admin = { id: w.users.admin.id, role: "admin" as const };
  expect((await currentProjectReport(admin, w.project.id))?.content.project.id).toBe(w.project.id);
  expect(await currentProjectReport({ id: outsider.id, role: "viewer" }, w.project.id)).toBeNull();
  expect(await listProjectReportVersions({ id: outsider.id, role: "viewer" }, w.project.id)).toBeNull();
  expect(await projectReportVersion({ id: outsider.id, role: "viewer" }, w.project.id, 1)).toBeNull();
  const nonMemberQa = await makeUser("qa");
  for (const who of [outsider, nonMemberQa]) {
    for (const [fn, path] of [
      [reportApi, "report"],
      [bundleApi, "bundle.zip"],
      [geojsonApi, "shots.geojson"],
    ] as const) {
      const a = await call(fn, apiRequest(`/api/projects/${w.project.id}/${path}`, { user: who }), { projectId: w.project.id });
      expect(a.status, `${who.role} ${path}`).toBe(404);
    }
    const page = await call(pageLoader, apiRequest(`/review/projects/${w.project.id}/report`, { user: who }), { projectId: w.project.id });
    expect(page.status).toBe(404);
  }
  const unknown = await call(reportApi, apiRequest(`/api/projects/no-such-project/report`, { user: w.users.admin }), { projectId: "no-such-project" });
  expect(unknown.status).toBe(404);
  // a member crew and a member QA read it too
  for (const u of [w.users.crew, w.users.qa]) {
    const a = await call(reportApi, apiRequest(`/api/projects/${w.project.id}/report`, { user: u }), { projectId: w.project.id });
    expect(a.status).toBe(200);
  }
});

test("a sign-off for the project makes a new version that names who signed and when", async () => {
  const before = (await currentProjectReport(viewer(), w.project.id))!;
  const { createSignOff } = await import("~/models/signoffs.server");
  const s = await createSignOff({ id: w.users.qa.id, role: "qa", email: w.users.qa.email }, w.passing.id, { decision: "approved", projectId: w.project.id, note: "fit for the corridor survey" });
  const after = (await currentProjectReport(viewer(), w.project.id))!;
  expect(after.version).toBe(before.version + 1);
  expect(after.content.signOffs).toHaveLength(1);
  expect(after.content.signOffs[0]).toMatchObject({ id: s.id, sensorId: w.passing.id, decision: "approved", by: "Fixture qa", note: "fit for the corridor survey" });
  expect(Date.parse(after.content.signOffs[0]!.at)).not.toBeNaN();
});
