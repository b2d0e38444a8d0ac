// issue 16: the report page's series route and the new /api/shots parameters, checked against a
// brute-force reading of the report's own per-shot rows (GET …/report?include=shots, api.md v1.1)
// and the fixture's shots: the chart series equals app/domain's errorSeries over every row, each
// reflectance × illuminance cell's bias is the mean computed directly, the explanation from the
// flagged rows equals the one over every row; the table's sort, filters and cursor walk every
// shot once; outside the reader's projects everything answers 404.
import { beforeAll, expect, test } from "vitest";
import { errorSeries, explainVerdict, illuminanceBand, mean, reflectanceClass, sampleKey, type ReportShotRow, type SeriesRow } from "~/domain";
import { loader as reportLoader } from "~/routes/api.sensors.$sensorId.report";
import { loader as seriesLoader } from "~/routes/api.sensors.$sensorId.report.series";
import { loader as shotsLoader } from "~/routes/api.shots";
import { action as exclusionAction } from "~/routes/api.shots.$shotId.exclusion";
import { reportSeries } from "~/models/report-series.server";
import { apiRequest, call, makeUser, type TestUser } from "../support/registry-fixtures";
import { addWrapSensor, reviewWorld, type ReviewWorld } from "../support/review-fixtures";

let w: ReviewWorld;
let wrapSensorId: string;
let outsider: TestUser;

beforeAll(async () => {
  w = await reviewWorld();
  wrapSensorId = (await addWrapSensor(w)).sensor.id;
  // a QA lead of no project: the world's sensors are not there for them
  outsider = await makeUser("qa");
  // one excluded shot on the failing sensor, so the series has every kind of notable shot
  const dark = w.shotsOf(w.failing.id).find((s) => s.reflectancePct === 10 && s.illuminanceKlux === 85)!;
  const r = await call(exclusionAction as never, apiRequest(`/api/shots/${dark.id}/exclusion`, { user: w.users.qa, json: { reason: "Board fell over in the wind" } }), { shotId: dark.id });
  expect(r.status).toBe(200);
});

type Series = {
  ruleProjectId: string | null;
  coverageK: number;
  errorSeries: ReturnType<typeof errorSeries> & { limitLine: { d: number; lim: number }[] };
  cells: { reflectance: string; illuminance: string; n: number; biasMm: number; outside: number }[];
  explain: { included: { n: number; sumMm: number; sumSqMm2: number; within: number; sumTMm: number }; flagged: ReportShotRow[] };
};

/**
 * The report's rows as the series reads them: the sample key is that of each shot's row number,
 * and ties go by the row number, as on the server (which reads no id until it names the drawn
 * shots); `named` turns the row numbers back into ids.
 */
const byRow = new Map<string, string>();
async function seriesRowsOf(list: ReportShotRow[]): Promise<SeriesRow[]> {
  const { getDb } = await import("~/db/client.server");
  const { sql } = await import("drizzle-orm");
  const got = await getDb().all<{ rn: number; id: string }>(sql`SELECT rowid AS rn, id FROM shots WHERE id IN (SELECT value FROM json_each(${JSON.stringify(list.map((r) => r.id))}))`);
  const rn = new Map(got.map((g) => [g.id, Number(g.rn)]));
  return list.map((r) => {
    const n = rn.get(r.id)!;
    const id = String(n).padStart(16, "0");
    byRow.set(id, r.id);
    return { id, key: sampleKey(n), d: r.referenceM, e: r.errorMm, lim: r.limitMm, within: r.within, excluded: r.excluded, flagged: r.flags.length > 0 };
  });
}
function named<T extends { points: SeriesRow[] }>(x: T): T {
  return { ...x, points: x.points.map((p) => ({ ...p, id: byRow.get(p.id)! })) };
}

async function seriesOf(sensorId: string, query = "", user = w.users.qa) {
  return call(seriesLoader as never, apiRequest(`/api/sensors/${sensorId}/report/series${query}`, { user }), { sensorId });
}
async function reportRows(sensorId: string, query = "") {
  const r = await call(reportLoader as never, apiRequest(`/api/sensors/${sensorId}/report${query ? `${query}&` : "?"}include=shots`, { user: w.users.qa }), { sensorId });
  expect(r.status).toBe(200);
  return r.json as { shots: ReportShotRow[]; tests: never[]; verdict: "pass" | "fail" | "insufficient"; rule: { coverageK: number }; ruleProjectId: string | null; n: number };
}

for (const which of ["failing", "wrap"] as const) {
  test(`the chart series of the ${which} sensor equals errorSeries over every row of its report`, async () => {
    const id = which === "failing" ? w.failing.id : wrapSensorId;
    const report = await reportRows(id);
    const res = await seriesOf(id);
    expect(res.status).toBe(200);
    const s = res.json as Series;
    expect(s.ruleProjectId).toBe(report.ruleProjectId);
    expect(s.coverageK).toBe(report.rule.coverageK);
    const rows = await seriesRowsOf(report.shots);
    const want = named(errorSeries(rows));
    expect(s.errorSeries.total).toBe(want.total);
    expect(s.errorSeries.notableTotal).toBe(want.notableTotal);
    expect(s.errorSeries.notableTotal).toBeGreaterThan(0);
    expect(s.errorSeries.points.map((p) => p.id)).toEqual(want.points.map((p) => p.id));
    for (const [i, p] of s.errorSeries.points.entries()) {
      const q = want.points[i]!;
      expect([p.within, p.excluded, p.flagged]).toEqual([q.within, q.excluded, q.flagged]);
      expect(p.lim).toBeCloseTo(q.lim, 9);
    }
    expect(s.errorSeries.bins.map((b) => [b.i, b.n, b.minE, b.maxE])).toEqual(want.bins.map((b) => [b.i, b.n, b.minE, b.maxE]));
  });
}

test("with small bins, samples and cap (so that the server really samples), the SQL series still equals errorSeries over every row", async () => {
  for (const id of [w.failing.id, wrapSensorId]) {
    const report = await reportRows(id);
    const rows = await seriesRowsOf(report.shots);
    for (const sizes of [
      { bins: 3, perBin: 2, maxNotable: 3 },
      { bins: 7, perBin: 1, maxNotable: 1 },
    ]) {
      const want = named(errorSeries(rows, sizes));
      const got = await reportSeries(w.users.qa, id, new URLSearchParams(), undefined, sizes);
      if (got.status !== 200) throw new Error(JSON.stringify(got.body));
      expect(got.body.errorSeries.points.length).toBeLessThan(rows.length);
      expect(got.body.errorSeries.points.map((p) => p.id)).toEqual(want.points.map((p) => p.id));
      expect(got.body.errorSeries.bins.map((b) => [b.i, b.n, b.minE, b.maxE])).toEqual(want.bins.map((b) => [b.i, b.n, b.minE, b.maxE]));
      expect(got.body.errorSeries.notableTotal).toBe(want.notableTotal);
    }
  }
});

test("each reflectance × illuminance cell: count, bias as the mean of its included errors, outside count (computed directly)", async () => {
  const report = await reportRows(w.failing.id);
  const fixture = new Map(w.shotsOf(w.failing.id).map((s) => [s.id, s]));
  const groups = new Map<string, ReportShotRow[]>();
  for (const r of report.shots) {
    if (r.excluded) continue;
    const f = fixture.get(r.id)!;
    const key = `${reflectanceClass(f.reflectancePct, false)}|${illuminanceBand(f.illuminanceKlux)}`;
    groups.set(key, [...(groups.get(key) ?? []), r]);
  }
  const s = (await seriesOf(w.failing.id)).json as Series;
  expect(s.cells).toHaveLength(groups.size);
  for (const c of s.cells) {
    const g = groups.get(`${c.reflectance}|${c.illuminance}`)!;
    expect(c.n).toBe(g.length);
    expect(c.biasMm).toBeCloseTo(mean(g.map((r) => r.errorMm)), 9);
    expect(c.outside).toBe(g.filter((r) => !r.within).length);
  }
  // the dark boards in sun read ~18 mm long (the fixture's story), one of them excluded
  const darkSun = s.cells.find((c) => c.reflectance === "dark" && c.illuminance === "high")!;
  expect(darkSun.n).toBe(8);
  expect(darkSun.biasMm).toBeGreaterThan(15);
});

test("the verdict explained from the included totals and the flagged rows equals the explanation over every row", async () => {
  for (const id of [w.failing.id, wrapSensorId]) {
    const report = await reportRows(id);
    const s = (await seriesOf(id)).json as Series;
    const inc = report.shots.filter((r) => !r.excluded);
    expect(s.explain.included.n).toBe(inc.length);
    expect(s.explain.included.within).toBe(inc.filter((r) => r.within).length);
    expect(s.explain.included.sumMm).toBeCloseTo(
      inc.reduce((a, r) => a + r.errorMm, 0),
      6,
    );
    expect(s.explain.flagged.map((r) => r.id).sort()).toEqual(
      inc
        .filter((r) => r.flags.length)
        .map((r) => r.id)
        .sort(),
    );
    const base = { verdict: report.verdict, tests: report.tests, coverageK: report.rule.coverageK };
    const all = explainVerdict({ ...base, shots: report.shots });
    const few = explainVerdict({ ...base, shots: s.explain.flagged, included: s.explain.included });
    expect(few.lines).toEqual(all.lines);
  }
  // the wrap sensor's −29 953 mm shot is named
  const wrap = (await seriesOf(wrapSensorId)).json as Series;
  expect(wrap.explain.flagged.some((r) => r.flags.includes("wrap") && r.errorMm < -29000)).toBe(true);
});

test("the series follows the report's selection (a session) and answers 404 outside the reader's projects", async () => {
  const sun = w.sessions.find((x) => x.sensorId === w.failing.id && x.startedAt.includes("05-05"))!;
  const report = await reportRows(w.failing.id, `?session=${sun.id}`);
  const s = (await seriesOf(w.failing.id, `?session=${sun.id}`)).json as Series;
  expect(s.errorSeries.total).toBe(report.shots.length);
  expect(s.errorSeries.total).toBe(15);
  expect((await seriesOf(w.failing.id, "", outsider)).status).toBe(404);
  expect((await seriesOf(w.failing.id, `?session=${sun.id}`, outsider)).status).toBe(404);
  expect((await seriesOf(crypto.randomUUID())).status).toBe(404);
  expect((await seriesOf(w.failing.id, `?session=${crypto.randomUUID()}`)).status).toBe(404);
  const bad = await seriesOf(w.failing.id, "?from=yesterday");
  expect(bad.status).toBe(400);
  expect(bad.json.errors[0].path).toBe("from");
});

// ---- GET /api/shots: sort, flag=any, count (issue 16) ----

const shotsGet = (query: string, user = w.users.qa) => call(shotsLoader as never, apiRequest(`/api/shots${query}`, { user }));

async function walk(query: string, limit: number) {
  const seen: { id: string; errorMm: number; referenceM: number; takenAt: string; flags: string[]; within: boolean; excluded: boolean }[] = [];
  let cursor: string | null = null;
  let total: number | undefined;
  for (let guard = 0; guard < 100; guard++) {
    const r = await shotsGet(`${query}&limit=${limit}&count=true${cursor ? `&cursor=${encodeURIComponent(cursor)}` : ""}`);
    expect(r.status).toBe(200);
    total ??= r.json.total;
    expect(r.json.total).toBe(total);
    seen.push(...r.json.shots);
    cursor = r.json.nextCursor;
    if (!cursor) break;
  }
  return { seen, total };
}

test("sort=-absError walks every shot once, largest |error| first, ties by id; the count tells them all", async () => {
  const all = (await reportRows(wrapSensorId)).shots;
  const { seen, total } = await walk(`?sensor=${wrapSensorId}&sort=-absError`, 4);
  expect(total).toBe(all.length);
  expect(seen.map((s) => s.id)).toEqual([...all].sort((a, b) => Math.abs(b.errorMm) - Math.abs(a.errorMm) || (a.id < b.id ? -1 : 1)).map((r) => r.id));
  expect(seen[0]!.errorMm).toBeLessThan(-29000);
});

test("every sort key, both ways, pages without gaps or repeats in the order of a brute-force sort", async () => {
  const all = (await reportRows(w.failing.id)).shots;
  const keys = {
    takenAt: (r: ReportShotRow) => r.takenAt,
    referenceM: (r: ReportShotRow) => r.referenceM,
    errorMm: (r: ReportShotRow) => r.errorMm,
    absError: (r: ReportShotRow) => Math.abs(r.errorMm),
    limitMm: (r: ReportShotRow) => r.referenceM,
  };
  for (const [key, val] of Object.entries(keys)) {
    for (const dir of [1, -1]) {
      const { seen } = await walk(`?sensor=${w.failing.id}&sort=${dir === -1 ? "-" : ""}${key}`, 7);
      const want = [...all].sort((a, b) => {
        const x = val(a);
        const y = val(b);
        const c = x < y ? -1 : x > y ? 1 : 0;
        return c * dir || (a.id < b.id ? -1 : 1);
      });
      expect(seen.map((s) => s.id)).toEqual(want.map((r) => r.id));
    }
  }
});

test("the table's filters: flagged (flag=any), outside, excluded match the report's rows; a cursor of another order is refused", async () => {
  const report = await reportRows(wrapSensorId);
  const rule = report.ruleProjectId ? `&project=${report.ruleProjectId}` : "";
  const flagged = await walk(`?sensor=${wrapSensorId}&flag=any${rule}&sort=-absError`, 50);
  expect(flagged.seen.map((s) => s.id).sort()).toEqual(
    report.shots
      .filter((r) => r.flags.length)
      .map((r) => r.id)
      .sort(),
  );
  const failing = await reportRows(w.failing.id);
  const frule = failing.ruleProjectId ? `&project=${failing.ruleProjectId}` : "";
  const outside = await walk(`?sensor=${w.failing.id}&within=false&excluded=false${frule}&sort=-absError`, 5);
  expect(outside.seen.map((s) => s.id).sort()).toEqual(
    failing.shots
      .filter((r) => !r.within && !r.excluded)
      .map((r) => r.id)
      .sort(),
  );
  expect(outside.total).toBeGreaterThan(5);
  const excluded = await walk(`?sensor=${w.failing.id}&excluded=true`, 5);
  expect(excluded.total).toBe(1);
  // a cursor is read only under the order that gave it
  const first = await shotsGet(`?sensor=${w.failing.id}&sort=-absError&limit=3`);
  const other = await shotsGet(`?sensor=${w.failing.id}&sort=referenceM&limit=3&cursor=${encodeURIComponent(first.json.nextCursor)}`);
  expect(other.status).toBe(400);
  expect(other.json.errors[0].path).toBe("cursor");
  const plain = await shotsGet(`?sensor=${w.failing.id}&limit=3&cursor=${encodeURIComponent(first.json.nextCursor)}`);
  expect(plain.status).toBe(400);
  const badSort = await shotsGet(`?sensor=${w.failing.id}&sort=colour`);
  expect(badSort.status).toBe(400);
  expect(badSort.json.errors[0].path).toBe("sort");
  // without count, the answer keeps api.md's shape
  expect(Object.keys(first.json).sort()).toEqual(["nextCursor", "shots"]);
});

test("a non-member asking the shots of the world's sensor (any sort or filter) gets 404, as for an unknown sensor", async () => {
  for (const q of [`?sensor=${w.failing.id}&sort=-absError`, `?sensor=${w.failing.id}&flag=any&count=true`]) {
    const r = await shotsGet(q, outsider);
    expect(r.status).toBe(404);
  }
  expect((await shotsGet(`?sensor=${crypto.randomUUID()}&sort=-absError`)).status).toBe(404);
});

// ---- GET /api/shots.geojson?max=… (issue 16: the map at any number of shots) ----

test("the map's GeoJSON with max: every notable shot first, then the fixed sample order; total and sampled say so; without max the answer is unchanged", async () => {
  const { loader: geoLoader } = await import("~/routes/api.shots[.]geojson");
  const geo = (q: string) => call(geoLoader as never, apiRequest(`/api/shots.geojson${q}`, { user: w.users.qa }));
  const report = await reportRows(w.failing.id);
  const rule = report.ruleProjectId ? `&project=${report.ruleProjectId}` : "";
  const notable = report.shots.filter((r) => r.excluded || !r.within || r.flags.length);
  const others = report.shots.filter((r) => !(r.excluded || !r.within || r.flags.length));
  expect(notable.length).toBeGreaterThan(3);
  const max = notable.length + 3;
  const g = await geo(`?sensor=${w.failing.id}${rule}&max=${max}`);
  expect(g.status).toBe(200);
  expect(g.json.total).toBe(report.shots.length);
  expect(g.json.sampled).toBe(true);
  const ids = (g.json.features as { properties: { id: string } }[]).map((f) => f.properties.id);
  expect(ids).toHaveLength(max);
  expect(new Set(ids.slice(0, notable.length))).toEqual(new Set(notable.map((r) => r.id)));
  expect(ids.slice(notable.length)).toEqual(
    [...others]
      .sort((a, b) => (a.id.slice(24) < b.id.slice(24) ? -1 : a.id.slice(24) > b.id.slice(24) ? 1 : a.id < b.id ? -1 : 1))
      .slice(0, 3)
      .map((r) => r.id),
  );
  // the shot panel's figures come with each feature
  const f0 = g.json.features[0].properties;
  expect(typeof f0.rangeM).toBe("number");
  expect(typeof f0.targetLabel).toBe("string");
  expect(Array.isArray(f0.photoIds)).toBe(true);
  // fewer notable shots than asked: the largest |error| stay
  const few = await geo(`?sensor=${w.failing.id}${rule}&max=2`);
  const big = [...notable].sort((a, b) => Math.abs(b.errorMm) - Math.abs(a.errorMm) || (a.id < b.id ? -1 : 1)).slice(0, 2);
  expect((few.json.features as { properties: { id: string } }[]).map((f) => f.properties.id)).toEqual(big.map((r) => r.id));
  // enough room: every located shot, no sampling
  const all = await geo(`?sensor=${w.failing.id}&max=1000`);
  expect(all.json.sampled).toBe(false);
  expect(all.json.features).toHaveLength(report.shots.length);
  const plain = await geo(`?sensor=${w.failing.id}`);
  expect(Object.keys(plain.json).sort()).toEqual(["features", "type"]);
  const bad = await geo(`?sensor=${w.failing.id}&max=0`);
  expect(bad.status).toBe(400);
  expect(bad.json.errors[0].path).toBe("max");
  expect((await call(geoLoader as never, apiRequest(`/api/shots.geojson?sensor=${w.failing.id}&max=10`, { user: outsider }))).status).toBe(404);
});
