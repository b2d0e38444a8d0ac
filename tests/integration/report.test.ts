// GET /api/sensors/:id/report and GET /api/sensors over a fixed data set synced through the real
// action. Every expected figure is computed HERE from first principles (ranging.md §4–6):
// mean, SD (n − 1), RMSE, Student t and χ² quantiles from jstat (an outside library), OLS
// by the normal equations, Hyndman–Fan type 7 percentile by hand — never by calling app/domain.
import { beforeAll, expect, test } from "vitest";
import jStat from "jstat";
import { action as syncAction } from "~/routes/api.sync";
import { loader as reportLoader } from "~/routes/api.sensors.$sensorId.report";
import { loader as sensorsLoader } from "~/routes/api.sensors";
import { action as exclusionAction } from "~/routes/api.shots.$shotId.exclusion";
import { apiRequest, call, makeProject, makeSensor, makeSite, makeUser, type TestUser, shareProject } from "../support/registry-fixtures";

const J = jStat as { studentt: { inv(p: number, df: number): number }; chisquare: { inv(p: number, df: number): number } };

// [reference D (m), error (mm), reflectance (%), illuminance (klux) | null, session, retro target]
type Row = [number, number, number, number | null, "A" | "B", boolean?];
const DATA: Row[] = [
  [5, 1.1, 10, 5, "A"],
  [5, -0.6, 85, 5, "A"],
  [5, 0.9, 10, 20, "A"],
  [5, 1.8, 85, 20, "A"],
  [15, 0.4, 10, 20, "A"],
  [15, 2.2, 85, 80, "A"],
  [15, -1.3, 50, 80, "A"],
  [15, 0.7, 10, 80, "A"],
  [40, 1.5, 85, 80, "A"],
  [40, 2.9, 10, 80, "A"],
  [40, -0.2, 50, null, "A"],
  [40, 1.0, 85, 20, "A"],
  [120, 3.05, 10, 5, "B"],
  [120, 0.8, 85, 5, "B"],
  [120, 2.4, 85, 20, "B"],
  [120, -0.9, 50, 20, "B"],
  [15, 1.6, 10, 80, "B"],
  [40, 0.3, 10, 80, "B"],
  [5, 1.2, 85, 5, "B"],
  [5, 0.1, 10, 5, "B", true],
  [40, 1.9, 50, 20, "B"],
  [120, 2.0, 10, 80, "B"],
  [15, -0.4, 85, 80, "B"],
  [40, 25.0, 85, 80, "B"],
];
const OUTLIER_INDEX = 23;
const A_TOL = 5; // mm
const B_TOL = 10; // ppm

let crew: TestUser;
let qa: TestUser;
let viewer: TestUser;
let sensorId: string;
let emptySensorId: string;
let fixtureProjectId: string;
const ids: string[] = [];
const sessionIds = { A: crypto.randomUUID(), B: crypto.randomUUID() };

beforeAll(async () => {
  // the sessions belong to no project: only an admin sees them (api.md v1.1); scoping has its own tests
  [crew, qa, viewer] = await Promise.all([makeUser("crew"), makeUser("qa"), makeUser("admin")]);
  const sensor = await makeSensor({ label: "Tripod scanner T2", wavelengthNm: 1550, toleranceMm: A_TOL, tolerancePpm: B_TOL });
  sensorId = sensor.id;
  emptySensorId = (await makeSensor({ label: "Spare depth camera", kind: "cw", wavelengthNm: 850, modulationHz: [20e6] })).id;
  const site = await makeSite({ targets: [{ reflectancePct: 50 }, { reflectancePct: 90, retro: true }] });
  // issue 14: the readers are members of the one project using the sensors (its rule is the default)
  fixtureProjectId = (await shareProject([sensor, { id: emptySensorId }], [site], [crew, qa, viewer])).id;
  const sessions = [
    { id: sessionIds.A, sensorId, siteId: site.id, startedAt: "2026-05-04T08:00:00+02:00", airTempC: 16, pressureHpa: 1008, humidityPct: 70 },
    { id: sessionIds.B, sensorId, siteId: site.id, startedAt: "2026-05-05T09:00:00+02:00" }, // no air: defaults
  ];
  const shots = DATA.map(([D, e, refl, lux, ses, retro], i) => {
    const id = crypto.randomUUID();
    ids.push(id);
    const day = ses === "A" ? "2026-05-04" : "2026-05-05";
    return {
      id,
      sessionId: sessionIds[ses],
      takenAt: `${day}T${String(10 + Math.floor(i / 6)).padStart(2, "0")}:${String((i % 6) * 10).padStart(2, "0")}:00+02:00`,
      targetId: retro ? site.targets[1]!.id : site.targets[0]!.id,
      reference: { method: "edm", distanceM: D },
      readings: { rangesM: [D + e / 1000] },
      reflectancePct: refl,
      illuminanceKlux: lux,
    };
  });
  const a = await call(syncAction, apiRequest("/api/sync", { user: crew, json: { deviceId: "tablet-3", sessions, shots } }));
  expect(a.json.results.every((r: { status: string }) => r.status === "accepted")).toBe(true);
  const ex = await call(exclusionAction, apiRequest(`/api/shots/${ids[OUTLIER_INDEX]}/exclusion`, { user: qa, json: { reason: "target board blown over by a passing lorry" } }), {
    shotId: ids[OUTLIER_INDEX]!,
  });
  expect(ex.status).toBe(200);
});

const report = (query = "", user: TestUser = viewer, id = sensorId) => call(reportLoader, apiRequest(`/api/sensors/${id}/report${query}`, { user }), { sensorId: id });
/** The same with the per-shot rows (api.md v1.1 `include=shots`): its figures come from the rows path. */
const reportWithShots = (query = "", user: TestUser = viewer, id = sensorId) => report(`${query}${query ? "&" : "?"}include=shots`, user, id);

// ---------- first principles ----------
const errOf = ([D, e]: Row) => (D + e / 1000 - D) * 1000; // the same float the server stores
const meanOf = (x: number[]) => x.reduce((s, v) => s + v, 0) / x.length;
const sdOf = (x: number[]) => {
  const m = meanOf(x);
  return Math.sqrt(x.reduce((s, v) => s + (v - m) ** 2, 0) / (x.length - 1));
};
const rmseOf = (x: number[]) => Math.sqrt(x.reduce((s, v) => s + v * v, 0) / x.length);
const type7 = (x: number[], p: number) => {
  const s = [...x].sort((a, b) => a - b);
  const h = (s.length - 1) * p;
  const lo = Math.floor(h);
  return s[lo]! + (h - lo) * ((s[Math.min(lo + 1, s.length - 1)] ?? s[lo]!) - s[lo]!);
};
const limitOf = (D: number, k: number) => k * (A_TOL + (B_TOL * D) / 1000);

const bothPaths = [
  ["from the sums and the error index", report],
  ["with include=shots, from the rows", reportWithShots],
] as const;

test.each(bothPaths)("the report's figures match the ones worked out here from the definitions (%s)", async (_, get) => {
  const r = await get();
  expect(r.status).toBe(200);
  const R = r.json;
  const inc = DATA.filter((_, i) => i !== OUTLIER_INDEX);
  const e = inc.map(errOf);
  const d = inc.map((x) => x[0]);
  const n = e.length;
  expect(R.n).toBe(23);
  expect(R.excluded).toBe(1);
  const bias = meanOf(e);
  const sd = sdOf(e);
  expect(R.biasMm).toBeCloseTo(bias, 9);
  expect(R.sdMm).toBeCloseTo(sd, 9);
  expect(R.rmseMm).toBeCloseTo(rmseOf(e), 9);
  expect(R.accuracy95Mm).toBeCloseTo(1.96 * rmseOf(e), 9); // NSSDA, FGDC-STD-007.3-1998
  const h = (J.studentt.inv(0.975, n - 1) * sd) / Math.sqrt(n);
  expect(R.biasCi95Mm[0]).toBeCloseTo(bias - h, 6);
  expect(R.biasCi95Mm[1]).toBeCloseTo(bias + h, 6);
  expect(R.p95AbsMm).toBeCloseTo(type7(e.map(Math.abs), 0.95), 9);
  expect(R.maxAbsMm).toBeCloseTo(Math.max(...e.map(Math.abs)), 9);
  expect(R.withinPct).toBeCloseTo((100 * inc.filter((x) => Math.abs(errOf(x)) <= limitOf(x[0], 2)).length) / n, 9);
  // OLS e = δ + κ·D (normal equations), standard errors with s² = Σr²/(n − 2)
  const dm = meanOf(d);
  const em = meanOf(e);
  const sxx = d.reduce((s, v) => s + (v - dm) ** 2, 0);
  const sxy = d.reduce((s, v, i) => s + (v - dm) * (e[i]! - em), 0);
  const slope = sxy / sxx;
  const icpt = em - slope * dm;
  const resid = e.map((v, i) => v - (icpt + slope * d[i]!));
  const s2 = resid.reduce((s, v) => s + v * v, 0) / (n - 2);
  const syy = e.reduce((s, v) => s + (v - em) ** 2, 0);
  expect(R.zeroOffsetMm).toBeCloseTo(icpt, 9);
  expect(R.scalePpm).toBeCloseTo(slope * 1000, 6); // mm per m = 1000 ppm
  expect(R.zeroOffsetSeMm).toBeCloseTo(Math.sqrt(s2 * (1 / n + (dm * dm) / sxx)), 9);
  expect(R.scaleSePpm).toBeCloseTo(Math.sqrt(s2 / sxx) * 1000, 6);
  expect(R.rSquared).toBeCloseTo(1 - resid.reduce((s, v) => s + v * v, 0) / syy, 9);
  // the four tests (ranging.md §6): precision bound σ·√(χ²₀.₉₅(ν)/ν), σ = T(D̄)
  const sigma = A_TOL + (B_TOL * dm) / 1000;
  const precisionLimit = sigma * Math.sqrt(J.chisquare.inv(0.95, n - 1) / (n - 1));
  const byName = Object.fromEntries(R.tests.map((t: { name: string }) => [t.name, t]));
  expect(byName.count).toEqual({ name: "count", pass: true, value: 23, limit: 20 });
  expect(byName.within).toMatchObject({ name: "within", pass: true, limit: 95 });
  expect(byName.bias).toMatchObject({ name: "bias", pass: true, limit: 5 });
  expect(byName.bias.value).toBeCloseTo(bias, 9);
  expect(byName.precision.pass).toBe(true);
  expect(byName.precision.limit).toBeCloseTo(precisionLimit, 6);
  expect(R.verdict).toBe("pass");
  expect(R.rule).toEqual({ minShots: 20, coverageK: 2, minWithinPct: 95, referenceRatio: 2, referenceInVerdict: false, statement: "rmse", edmUncertaintyMm: null, edmUncertaintyPpm: null });
  // ranging.md §7 on this set: no reference uncertainty anywhere (EDM, no EDM named, default rule) → unknown, never 0
  expect(R.referenceUnknownN).toBe(23);
  expect(R.referenceRmseMm).toBeNull();
  expect(R.rmseCombinedMm).toBeNull();
  expect(byName.reference).toEqual({ name: "reference", pass: null, value: null, limit: sigma / 2 });
  // zero offset t = δ/SE(δ), ν = n − 2, against jstat's t₀.₉₇₅
  const t = icpt / Math.sqrt(s2 * (1 / n + (dm * dm) / sxx));
  expect(R.zeroOffsetT).toBeCloseTo(t, 6);
  expect(R.zeroOffsetSignificant).toBe(Math.abs(t) > J.studentt.inv(0.975, n - 2));
  expect(R.statement).toBe("rmse");
  // api.md v1.1: the rule of the reader's only project holding the sensor (here the default values)
  expect(R.ruleProjectId).toBe(fixtureProjectId);
  expect(R.traceability).toEqual([]);
});

test.each(bothPaths)("the breakdowns, drift, defaulted air and coverage follow the bands of ranging.md §5–6 (%s)", async (_, get) => {
  const R = (await get()).json;
  const inc = DATA.filter((_, i) => i !== OUTLIER_INDEX);
  const classOf = (x: Row) => (x[5] ? "retro" : x[2] < 20 ? "dark" : x[2] <= 60 ? "mid" : "bright");
  for (const band of ["dark", "mid", "bright", "retro"]) {
    const e = inc.filter((x) => classOf(x) === band).map(errOf);
    const row = R.byReflectance.find((b: { band: string }) => b.band === band);
    expect(row.n).toBe(e.length);
    expect(row.biasMm).toBeCloseTo(meanOf(e), 9);
    expect(row.rmseMm).toBeCloseTo(rmseOf(e), 9);
    if (e.length > 1) expect(row.sdMm).toBeCloseTo(sdOf(e), 9);
    else expect(row.sdMm).toBeNull(); // an SD of one shot cannot be computed
  }
  const luxBand = (k: number) => (k < 10 ? "low" : k < 50 ? "moderate" : "high");
  for (const band of ["low", "moderate", "high"]) {
    const e = inc.filter((x) => x[3] != null && luxBand(x[3]) === band).map(errOf);
    expect(R.byIlluminance.find((b: { band: string }) => b.band === band).n).toBe(e.length);
  }
  expect(R.byIlluminance.reduce((s: number, b: { n: number }) => s + b.n, 0)).toBe(22); // one shot had no lux reading
  const rangeBand = (D: number) => (D < 10 ? "0-10" : D < 30 ? "10-30" : D < 100 ? "30-100" : "100+");
  expect(R.byRange.map((b: { band: string }) => b.band)).toEqual(["0-10", "10-30", "30-100", "100+"]);
  for (const b of R.byRange) expect(b.biasMm).toBeCloseTo(meanOf(inc.filter((x) => rangeBand(x[0]) === b.band).map(errOf)), 9);
  // drift: one entry per session in time order, bias of its included shots
  expect(R.drift.map((x: { sessionId: string }) => x.sessionId)).toEqual([sessionIds.A, sessionIds.B]);
  expect(R.drift[1].biasMm).toBeCloseTo(meanOf(inc.filter((x) => x[4] === "B").map(errOf)), 9);
  expect(R.drift[0].startedAt).toBe("2026-05-04T08:00:00+02:00");
  expect(R.airDefaulted).toEqual([sessionIds.B]);
  // coverage: each band × {dark, bright} needs 3 (retro boards count for neither)
  const missing = [];
  for (const band of ["0-10", "10-30", "30-100", "100+"]) {
    for (const cls of ["dark", "bright"]) {
      const have = inc.filter((x) => !x[5] && rangeBand(x[0]) === band && classOf(x) === cls).length;
      if (have < 3) missing.push({ rangeBand: band, reflectance: cls, have, need: 3 });
    }
  }
  expect(R.coverage).toEqual({ complete: false, missing, needsBrightSun: false });
});

test("shot rows carry the exclusion, the outlier flag and each shot's own limit", async () => {
  const R = (await reportWithShots()).json;
  expect(R.shots).toHaveLength(24);
  expect(R.shots.map((s: { id: string }) => s.id).sort()).toEqual([...ids].sort());
  const out = R.shots.find((s: { id: string }) => s.id === ids[OUTLIER_INDEX]);
  expect(out.excluded).toBe(true);
  // outlier: |e − median| > 3 · 1.4826 · MAD over the included shots (ranging.md §4)
  const e = DATA.filter((_, i) => i !== OUTLIER_INDEX).map(errOf);
  const med = type7(e, 0.5);
  const madv = type7(
    e.map((v) => Math.abs(v - med)),
    0.5,
  );
  const flagged = DATA.map((x, i) => [ids[i], Math.abs(errOf(x) - med) > 3 * 1.4826 * madv] as const)
    .filter(([, f]) => f)
    .map(([id]) => id);
  expect(
    R.shots
      .filter((s: { flags: string[] }) => s.flags.includes("outlier"))
      .map((s: { id: string }) => s.id)
      .sort(),
  ).toEqual(flagged.sort());
  expect(flagged).toContain(ids[OUTLIER_INDEX]);
  const first = R.shots.find((s: { id: string }) => s.id === ids[12]);
  expect(first.limitMm).toBeCloseTo(limitOf(120, 2), 12);
  expect(first.referenceM).toBe(120);
  expect(Object.keys(first)).toEqual(["id", "takenAt", "sessionId", "referenceM", "rangeM", "errorMm", "limitMm", "within", "repeatabilityMm", "excluded", "flags"]);
});

// api.md "v1.1 additions" of the report (issue 15)
const V11 = ["ruleProjectId", "zeroOffsetT", "zeroOffsetSignificant", "referenceRmseMm", "referenceUnknownN", "rmseCombinedMm", "statement", "traceability"];

test("the answer has exactly api.md's fields, in its order, plus the v1.1 additions; rows only with include=shots", async () => {
  const fields = [
    "sensorId",
    "rule",
    "n",
    "excluded",
    "biasMm",
    "biasCi95Mm",
    "sdMm",
    "rmseMm",
    "accuracy95Mm",
    "p95AbsMm",
    "maxAbsMm",
    "withinPct",
    "zeroOffsetMm",
    "zeroOffsetSeMm",
    "scalePpm",
    "scaleSePpm",
    "tests",
    "verdict",
    "byReflectance",
    "byIlluminance",
    "byRange",
    "rSquared",
    "airDefaulted",
    "coverage",
    "drift",
  ];
  // api.md v1.1: without include=shots the key is absent
  expect(Object.keys((await report()).json).filter((k) => !V11.includes(k))).toEqual(fields);
  expect((await report("?include=photos")).status).toBe(400);
  const R = (await reportWithShots()).json;
  expect(Object.keys(R).filter((k) => !V11.includes(k))).toEqual([...fields, "shots"]);
  for (const k of V11) expect(Object.keys(R)).toContain(k);
  expect(R.tests.map((t: { name: string }) => t.name)).toEqual(["count", "within", "bias", "precision", "reference"]);
  expect(Object.keys(R.byReflectance[0])).toEqual(["band", "n", "biasMm", "sdMm", "rmseMm", "withinPct"]);
});

test("from/to select by the shot's own date and session picks sessions", async () => {
  const onlyA = (await report("?to=2026-05-04")).json;
  expect(onlyA.n).toBe(12);
  expect(onlyA.biasMm).toBeCloseTo(meanOf(DATA.filter((x) => x[4] === "A").map(errOf)), 9);
  const onlyB = (await report("?from=2026-05-05&to=2026-05-05")).json;
  expect(onlyB.n + onlyB.excluded).toBe(12);
  const bySession = (await report(`?session=${sessionIds.A}&session=${sessionIds.B}`)).json;
  expect(bySession.n).toBe(23);
  expect((await report(`?session=${sessionIds.B}`)).json.drift.map((x: { sessionId: string }) => x.sessionId)).toEqual([sessionIds.B]);
  const bad = await report("?from=last-week");
  expect(bad.status).toBe(400);
  expect(bad.json.errors[0].path).toBe("from");
});

test("project picks its rule: limits and within are judged with its coverage factor", async () => {
  const p = await makeProject({ coverageK: 0.5, minShots: 30, minWithinPct: 90, memberIds: [crew.id, qa.id, viewer.id] });
  const R = (await reportWithShots(`?project=${p.id}`)).json;
  expect(R.rule).toMatchObject({ minShots: 30, coverageK: 0.5, minWithinPct: 90 });
  expect(R.ruleProjectId).toBe(p.id);
  const inc = DATA.filter((_, i) => i !== OUTLIER_INDEX);
  expect(R.withinPct).toBeCloseTo((100 * inc.filter((x) => Math.abs(errOf(x)) <= limitOf(x[0], 0.5)).length) / inc.length, 9);
  expect(R.withinPct).toBeLessThan(100);
  expect(R.shots.find((s: { id: string }) => s.id === ids[12]).limitMm).toBeCloseTo(limitOf(120, 0.5), 12);
  expect(R.verdict).toBe("insufficient"); // 23 < 30
  expect((await report("?project=no-such-project")).status).toBe(404);
});

test("a sensor with no shots gives a valid empty report; an unknown sensor is a 404 JSON", async () => {
  const R = (await report("", viewer, emptySensorId)).json;
  expect(R.n).toBe(0);
  expect(R.excluded).toBe(0);
  for (const k of [
    "biasMm",
    "biasCi95Mm",
    "sdMm",
    "rmseMm",
    "accuracy95Mm",
    "p95AbsMm",
    "maxAbsMm",
    "withinPct",
    "zeroOffsetMm",
    "scalePpm",
    "rSquared",
    "zeroOffsetT",
    "zeroOffsetSignificant",
    "referenceRmseMm",
    "rmseCombinedMm",
  ])
    expect(R[k]).toBeNull();
  expect(R.referenceUnknownN).toBe(0);
  expect(R.verdict).toBe("insufficient");
  expect(R.shots).toBeUndefined();
  expect((await reportWithShots("", viewer, emptySensorId)).json.shots).toEqual([]);
  expect(R.airDefaulted).toEqual([]);
  const missing = await report("", viewer, "no-such-sensor");
  expect(missing.status).toBe(404);
  expect(missing.json.error).toMatch(/No sensor/);
  expect((await call(reportLoader, apiRequest(`/api/sensors/${sensorId}/report`), { sensorId })).status).toBe(401);
});

test("GET /api/sensors lists live sensors with the same verdict, n, bias and RMSE as their reports", async () => {
  const a = await call(sensorsLoader, apiRequest("/api/sensors", { user: viewer }));
  expect(a.status).toBe(200);
  const mine = a.json.sensors.find((s: { id: string }) => s.id === sensorId);
  const R = (await report()).json;
  expect(mine).toEqual({ id: sensorId, label: "Tripod scanner T2", kind: "pulsed", verdict: R.verdict, n: R.n, biasMm: R.biasMm, rmseMm: R.rmseMm, lastShotAt: "2026-05-05T13:50:00+02:00" });
  const empty = a.json.sensors.find((s: { id: string }) => s.id === emptySensorId);
  expect(empty).toMatchObject({ n: 0, verdict: "insufficient", biasMm: null, lastShotAt: null });
  expect((await call(sensorsLoader, apiRequest("/api/sensors"))).status).toBe(401);
});

test("the packed one-query load reads every number back bit for bit, in the same order as the plain query", async () => {
  const { loadReportShots } = await import("~/models/reports.server");
  const fast = await loadReportShots(sensorId, {});
  const plain = await loadReportShots(sensorId, {}, { details: true });
  expect(fast).toHaveLength(24);
  expect(fast).toEqual(plain.map(({ note: _n, targetLabel: _t, ...r }) => r));
  for (let i = 0; i < fast.length; i++) expect(Object.is(fast[i]!.errorMm, plain[i]!.errorMm)).toBe(true);
});
