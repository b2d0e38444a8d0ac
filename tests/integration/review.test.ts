// The review screens' loaders against a real database filled through the real ingest: the
// overview, the sensor report page, the print page and the map page, with their guards.
// Expected figures are plain means of the invented errors the fixture synced (ranging.md §5:
// bias = mean error of the included shots).
import { beforeAll, expect, test } from "vitest";
import * as overview from "~/routes/review";
import * as sensorPage from "~/routes/review.sensors.$sensorId";
import * as printPage from "~/routes/review.sensors.$sensorId.print";
import * as mapPage from "~/routes/review.sensors.$sensorId.map";
import * as exclusionApi from "~/routes/api.shots.$shotId.exclusion";
import * as shotsApi from "~/routes/api.shots";
import { buildSensorReport } from "~/models/reports.server";
import { apiRequest, call } from "../support/registry-fixtures";
import { addWrapSensor, reviewWorld, type ReviewWorld } from "../support/review-fixtures";
import { booleanPointInPolygon, point } from "@turf/turf";
import type { Feature, Polygon } from "geojson";

let w: ReviewWorld;
beforeAll(async () => {
  w = await reviewWorld();
});

const meanOf = (xs: number[]) => xs.reduce((a, b) => a + b, 0) / xs.length;

test("the overview loader: the failing roof scanner comes first and says it fails on bias", async () => {
  const data = (await overview.loader({ request: apiRequest("/review", { user: w.users.qa }), params: {}, context: {} } as never)) as Awaited<ReturnType<typeof overview.loader>>;
  const ids = data.rows.map((r) => r.id);
  expect(ids.indexOf(w.failing.id)).toBeLessThan(ids.indexOf(w.passing.id));
  const fail = data.rows.find((r) => r.id === w.failing.id)!;
  expect(fail.verdict).toBe("fail");
  expect(fail.failed).toContain("bias");
  expect(fail.n).toBe(30);
  expect(fail.biasMm).toBeCloseTo(meanOf(w.shotsOf(w.failing.id).map((s) => s.errorMm)), 6);
  expect(fail.trace).toHaveLength(2);
  expect(fail.trace[1]!.biasMm!).toBeGreaterThan(fail.trace[0]!.biasMm! + 8); // the sunny session reads long
  expect(fail.calibrationDue).toBe("2026-09-30");
  expect(fail.lastShotAt?.startsWith("2026-05-05")).toBe(true);
  // where it goes wrong: dark boards in bright sun (the fixture's 9 long-reading shots)
  const darkSun = w.shotsOf(w.failing.id).filter((s) => s.reflectancePct < 20 && s.illuminanceKlux >= 50);
  expect(fail.worst).toMatchObject({ reflectance: "dark", illuminance: "high", n: darkSun.length });
  expect(fail.worst!.biasMm).toBeCloseTo(meanOf(darkSun.map((s) => s.errorMm)), 6);
  const pass = data.rows.find((r) => r.id === w.passing.id)!;
  expect(pass.verdict).toBe("pass");
  expect(pass.worst).toBeNull();
  expect(pass.n).toBe(24);
  expect(data.canImport).toBe(true);
});

test("the overview's period filter narrows every figure to the chosen days", async () => {
  const data = (await overview.loader({ request: apiRequest("/review?from=2026-05-04&to=2026-05-04", { user: w.users.viewer }), params: {}, context: {} } as never)) as Awaited<
    ReturnType<typeof overview.loader>
  >;
  const fail = data.rows.find((r) => r.id === w.failing.id)!;
  const day1 = w.shotsOf(w.failing.id).filter((s) => s.takenAt.startsWith("2026-05-04"));
  expect(fail.n).toBe(day1.length);
  expect(fail.biasMm).toBeCloseTo(meanOf(day1.map((s) => s.errorMm)), 6);
  expect(fail.verdict).toBe("insufficient"); // 15 shots < 20
  expect(data.canImport).toBe(false); // a viewer reads only
});

test("the overview's project filter keeps the project's sensors only", async () => {
  const data = (await overview.loader({ request: apiRequest(`/review?project=${w.project.id}`, { user: w.users.qa }), params: {}, context: {} } as never)) as Awaited<
    ReturnType<typeof overview.loader>
  >;
  expect(data.rows.map((r) => r.id).sort()).toEqual([w.failing.id, w.passing.id].sort());
  // api.md v1.1: a list filtered by an unknown project (or one outside the reader's) answers 404
  const other = await overview.loader({ request: apiRequest(`/review?project=${crypto.randomUUID()}`, { user: w.users.qa }), params: {}, context: {} } as never).catch((e: unknown) => e);
  expect(other).toBeInstanceOf(Response);
  expect((other as Response).status).toBe(404);
});

test("signed-out visitors of the review pages are sent to sign in", async () => {
  for (const [mod, path, params] of [
    [overview, "/review", {}],
    [sensorPage, `/review/sensors/${w.failing.id}`, { sensorId: w.failing.id }],
    [printPage, `/review/sensors/${w.failing.id}/print`, { sensorId: w.failing.id }],
    [mapPage, `/review/sensors/${w.failing.id}/map`, { sensorId: w.failing.id }],
  ] as const) {
    const r = await call(mod.loader as never, apiRequest(path), params);
    expect(r.status).toBe(302);
    expect(r.headers.get("Location")).toContain("/login?redirectTo=");
  }
});

test("the report page: QA may review, a viewer and a crew member read only; an unknown sensor is 404", async () => {
  const load = (user: typeof w.users.qa, id = w.failing.id) =>
    sensorPage.loader({ request: apiRequest(`/review/sensors/${id}`, { user }), params: { sensorId: id }, context: {} } as never) as Promise<Awaited<ReturnType<typeof sensorPage.loader>>>;
  const qa = await load(w.users.qa);
  expect(qa.canReview).toBe(true);
  expect(qa.sensor.label).toBe("Roof scanner RS-1");
  expect(qa.sessions.map((s) => s.startedAt)).toEqual(["2026-05-04T08:00:00+02:00", "2026-05-05T13:00:00+02:00"]);
  expect(qa.sessions[0]!.siteName).toBe("Fernhollow yard baseline");
  // issue 16: the table's target labels come with its page of /api/shots, not with the page's loader
  expect("extras" in qa).toBe(false);
  const listed = await call(shotsApi.loader as never, apiRequest(`/api/shots?sensor=${w.failing.id}&limit=1000`, { user: w.users.qa }));
  expect([...new Set((listed.json.shots as { targetLabel: string }[]).map((s) => s.targetLabel))].sort()).toEqual(["Dark board", "Grey board", "White board"]);
  expect((await load(w.users.viewer)).canReview).toBe(false);
  expect((await load(w.users.crew)).canReview).toBe(false);
  expect((await load(w.users.admin)).canReview).toBe(true);
  const missing = await load(w.users.qa, crypto.randomUUID()).catch((e) => e);
  expect((missing as Response).status).toBe(404);
});

test("an exclusion with a reason shows on the report page and changes the figures at once", async () => {
  const dark = w.shotsOf(w.failing.id).filter((s) => s.reflectancePct === 10 && s.illuminanceKlux === 85);
  const target = dark[0]!;
  const before = (await buildSensorReport(w.users.qa, w.failing.id, {}))!;
  const res = await call(exclusionApi.action as never, apiRequest(`/api/shots/${target.id}/exclusion`, { user: w.users.qa, json: { reason: "Board fell over in the wind" } }), { shotId: target.id });
  expect(res.status).toBe(200);
  const page = (await sensorPage.loader({ request: apiRequest(`/review/sensors/${w.failing.id}`, { user: w.users.qa }), params: { sensorId: w.failing.id }, context: {} } as never)) as Awaited<
    ReturnType<typeof sensorPage.loader>
  >;
  expect(page.sensor.id).toBe(w.failing.id);
  const reasonOf = async () => {
    const r = await call(shotsApi.loader as never, apiRequest(`/api/shots?sensor=${w.failing.id}&excluded=true&limit=1000`, { user: w.users.qa }));
    return (r.json.shots as { id: string; exclusionReason: string | null }[]).find((s) => s.id === target.id)?.exclusionReason;
  };
  expect(await reasonOf()).toBe("Board fell over in the wind");
  const after = (await buildSensorReport(w.users.qa, w.failing.id, {}))!;
  expect(after.excluded).toBe(before.excluded + 1);
  expect(after.n).toBe(before.n - 1);
  const kept = w.shotsOf(w.failing.id).filter((s) => s.id !== target.id);
  expect(after.biasMm).toBeCloseTo(meanOf(kept.map((s) => s.errorMm)), 6);
  // a viewer cannot exclude
  const denied = await call(exclusionApi.action as never, apiRequest(`/api/shots/${dark[1]!.id}/exclusion`, { user: w.users.viewer, json: { reason: "not mine to say" } }), { shotId: dark[1]!.id });
  expect(denied.status).toBe(403);
  // restore, so other tests see the full set
  const back = await call(exclusionApi.action as never, apiRequest(`/api/shots/${target.id}/exclusion`, { user: w.users.qa, method: "DELETE", json: { reason: "Checked the photo: board stood" } }), {
    shotId: target.id,
  });
  expect(back.status).toBe(200);
  const restored = (await sensorPage.loader({ request: apiRequest(`/review/sensors/${w.failing.id}`, { user: w.users.qa }), params: { sensorId: w.failing.id }, context: {} } as never)) as Awaited<
    ReturnType<typeof sensorPage.loader>
  >;
  expect(restored.sensor.id).toBe(w.failing.id);
  expect(await reasonOf()).toBeUndefined();
});

test("the print page carries the whole report of the selection and who generated it when", async () => {
  const data = (await printPage.loader({
    request: apiRequest(`/review/sensors/${w.failing.id}/print?from=2026-05-05&project=${w.project.id}`, { user: w.users.viewer }),
    params: { sensorId: w.failing.id },
    context: {},
  } as never)) as Awaited<ReturnType<typeof printPage.loader>>;
  const day2 = w.shotsOf(w.failing.id).filter((s) => s.takenAt.startsWith("2026-05-05"));
  expect(data.report.n + data.report.excluded).toBe(day2.length);
  expect(data.report.biasMm).toBeCloseTo(meanOf(day2.map((s) => s.errorMm)), 6);
  expect(data.report.tests.map((t) => t.name).sort()).toEqual(["bias", "count", "precision", "reference", "within"]); // issue 15 adds the reference test
  expect(data.project?.name).toBe("River valley corridor");
  expect(data.by).toBe("Fixture viewer");
  expect(Date.now() - Date.parse(data.generatedAt)).toBeLessThan(60_000);
});

test("the map page gets the site outline, its station and its targets as GeoJSON from the database", async () => {
  const data = (await mapPage.loader({ request: apiRequest(`/review/sensors/${w.failing.id}/map`, { user: w.users.crew }), params: { sensorId: w.failing.id }, context: {} } as never)) as Awaited<
    ReturnType<typeof mapPage.loader>
  >;
  expect(data.site.stations.features).toHaveLength(1);
  expect(data.site.targets.features.map((f) => f.properties!.label).sort()).toEqual(["Dark board", "Grey board", "White board"]);
  expect(data.site.outline.features).toHaveLength(1);
  const outline = data.site.outline.features[0] as Feature<Polygon>;
  for (const f of [...data.site.stations.features, ...data.site.targets.features]) {
    expect(booleanPointInPolygon(point((f.geometry as { coordinates: number[] }).coordinates), outline)).toBe(true);
  }
  expect(data.basemapUrl).toBeNull();
});

// Issue 12: a sensor failed by one wrap-flagged shot is explained by that shot, before any band.
test("a failure driven by one wrap-flagged shot is named with its size in the overview, the report page's data and the print", async () => {
  const { sensor, wrapShotId } = await addWrapSensor(w);
  const data = (await overview.loader({ request: apiRequest("/review", { user: w.users.qa }), params: {}, context: {} } as never)) as Awaited<ReturnType<typeof overview.loader>>;
  const row = data.rows.find((r) => r.id === sensor.id)!;
  expect(row.verdict).toBe("fail");
  expect(row.failed).toEqual(expect.arrayContaining(["bias", "precision"]));
  expect(row.why).toMatch(
    /^1 shot flagged wrap \(−29\u202f953 mm\) drives the bias and precision \(SD\) tests; excluding it would give bias [+−]\d\.\d\d mm \(limit ±10\.00 mm\) and precision \(SD\) \d\.\d\d mm \(limit \d+\.\d\d mm\): a pass\.$/,
  );
  // the same words from the report the page and the print read
  const report = (await buildSensorReport(w.users.qa, sensor.id, {}))!;
  expect(report.shots.find((s) => s.id === wrapShotId)!.flags).toContain("wrap");
  const { explanationOf } = await import("~/components/review/report-figures");
  const e = explanationOf(report);
  expect(e.flaggedLine).toBe(row.why);
  expect(e.lines[0]).toBe(row.why);
  expect(e.lines[1]).toMatch(/^Bias −1\d{3}\.\d\d mm is beyond the limit ±10\.00 mm\.$/);
  const printed = (await printPage.loader({ request: apiRequest(`/review/sensors/${sensor.id}/print`, { user: w.users.viewer }), params: { sensorId: sensor.id }, context: {} } as never)) as Awaited<
    ReturnType<typeof printPage.loader>
  >;
  expect(explanationOf(printed.report).flaggedLine).toBe(row.why);
});
