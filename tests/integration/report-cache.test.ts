// The report cache never serves stale figures: after every kind of change a report depends on
// (an exclusion, a restore, a new sync, a sensor spec edit, a rule edit, a sign-off) the next
// GET /api/sensors/:id/report shows it — also when the change came through another app
// instance (a second database handle on the same file, with its own cache), and a report
// patched from kept rows equals one computed from nothing. Expected figures are worked out
// here from the definitions (ranging.md §4–6: mean, limit k·(a + b·D/1000), drift flag
// |session bias − last approved bias| > T(session mean D)), never by calling app/domain.
import { afterAll, beforeAll, expect, test } from "vitest";
import { getDb, openDb, type Db } from "~/db/client.server";
import { resetEnvCache } from "~/env.server";
import { startFakeSmtp, type FakeSmtp } from "~/mail/fake-smtp.server";
import { computeSensorReport, clearReportCache, sensorReportJson, setRowsPageForTests } from "~/models/reports.server";
import { excludeShot } from "~/models/exclusions.server";
import { ingestSync } from "~/models/sync.server";
import { updateSensor } from "~/models/sensors.server";
import { updateProject } from "~/models/projects.server";
import { createSignOff } from "~/models/signoffs.server";
import { action as syncAction } from "~/routes/api.sync";
import { loader as reportLoader } from "~/routes/api.sensors.$sensorId.report";
import { action as exclusionAction } from "~/routes/api.shots.$shotId.exclusion";
import { apiRequest, call, makeProject, makeSensor, makeSite, makeUser, type TestUser } from "../support/registry-fixtures";
import { tempMailDir } from "./auth-helpers";

const A_TOL = 1; // mm
const B_TOL = 0; // ppm: T(D) = 1 mm at every distance, so the drift flag is easy to reason about

let smtp: FakeSmtp;
let crew: TestUser;
let qa: TestUser;
let admin: TestUser;
let sensorId: string;
let siteId: string;
let projectId: string;
let other: Db;
const sessions = { A: crypto.randomUUID(), B: crypto.randomUUID() };

/** What the test knows of every stored shot: its reference D (m), error (mm), session, exclusion. */
type Known = { id: string; D: number; e: number; ses: "A" | "B"; excluded: boolean; takenAt: string };
const known: Known[] = [];
let clock = 0;

function shotBody(D: number, e: number, ses: "A" | "B"): Known & { body: unknown } {
  const id = crypto.randomUUID();
  clock++;
  const takenAt = `2026-05-0${ses === "A" ? 4 : 5}T${String(9 + Math.floor(clock / 60)).padStart(2, "0")}:${String(clock % 60).padStart(2, "0")}:00+02:00`;
  return {
    id,
    D,
    e,
    ses,
    excluded: false,
    takenAt,
    body: { id, sessionId: sessions[ses], takenAt, reference: { method: "edm", distanceM: D }, readings: { rangesM: [D + e / 1000] }, reflectancePct: 50, illuminanceKlux: 20 },
  };
}

async function sync(rows: [number, number, "A" | "B"][], withSessions = false) {
  const made = rows.map(([D, e, ses]) => shotBody(D, e, ses));
  const body = {
    deviceId: "tablet-cache",
    sessions: withSessions
      ? [
          { id: sessions.A, sensorId, siteId, startedAt: "2026-05-04T08:00:00+02:00" },
          { id: sessions.B, sensorId, siteId, startedAt: "2026-05-05T08:00:00+02:00" },
        ]
      : [],
    shots: made.map((m) => m.body),
  };
  const a = await call(syncAction, apiRequest("/api/sync", { user: crew, json: body }));
  expect(a.status).toBe(200);
  expect(a.json.results.every((r: { status: string }) => r.status === "accepted")).toBe(true);
  for (const m of made) known.push({ id: m.id, D: m.D, e: m.e, ses: m.ses, excluded: false, takenAt: m.takenAt });
}

/** Every number of a and b (same shape) within tol of each other. */
function expectClose(a: unknown, b: unknown, tol = 1e-9, path = "report"): void {
  if (typeof a === "number" && typeof b === "number") {
    if (Math.abs(a - b) > tol * Math.max(1, Math.abs(a))) throw new Error(`${path}: ${a} ≠ ${b}`);
  } else if (a && b && typeof a === "object" && typeof b === "object") {
    expect(Object.keys(a)).toEqual(Object.keys(b));
    for (const k of Object.keys(a)) expectClose((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k], tol, `${path}.${k}`);
  } else expect(a, path).toEqual(b);
}

/**
 * The kept report (its figures from the sums and the error index) with the rows of the same
 * query asked with include=shots (the same figures, the rows streamed after them), checked
 * against the rows path, which reads every shot and sums in JS (computeSensorReport): the same
 * figures to far below 0.01 mm, the same rows exactly.
 */
const report = async (query = "") => {
  const get = (q: string) => call(reportLoader, apiRequest(`/api/sensors/${sensorId}/report${q}`, { user: qa }), { sensorId });
  const r = await get(query);
  expect(r.status).toBe(200);
  if (query.includes("include=shots")) return r.json;
  const w = await get(`${query}${query ? "&" : "?"}include=shots`);
  expect(w.status).toBe(200);
  const { shots, ...figures } = w.json;
  expect(figures).toEqual(r.json);
  const fromShots = await computeSensorReport(qa, sensorId, new URLSearchParams(query));
  if (fromShots.status !== 200) throw new Error(JSON.stringify(fromShots.body));
  const { shots: rows, ...rowFigures } = fromShots.body;
  expectClose(rowFigures, r.json);
  expect(shots).toEqual(JSON.parse(JSON.stringify(rows)));
  return { ...r.json, shots };
};

// ---------- first principles ----------
const errOf = (k: Known) => (k.D + k.e / 1000 - k.D) * 1000; // the float the server stores
const mean = (x: number[]) => x.reduce((s, v) => s + v, 0) / x.length;
const included = () => known.filter((k) => !k.excluded);
const expectFigures = (R: { n: number; excluded: number; biasMm: number; shots?: { id: string }[] }) => {
  expect(R.n).toBe(included().length);
  expect(R.excluded).toBe(known.length - included().length);
  expect(R.biasMm).toBeCloseTo(mean(included().map(errOf)), 9);
  // the rows come only with include=shots (api.md v1.1)
  if (R.shots) expect(R.shots.map((s) => s.id).sort()).toEqual(known.map((k) => k.id).sort());
};

beforeAll(async () => {
  smtp = await startFakeSmtp({ port: 0, mailDir: tempMailDir("report-cache") });
  process.env.SMTP_URL = `smtp://127.0.0.1:${smtp.port}`;
  resetEnvCache();
  [crew, qa, admin] = await Promise.all([makeUser("crew"), makeUser("qa"), makeUser("admin")]);
  const sensor = await makeSensor({ label: "Roof scanner R3", toleranceMm: A_TOL, tolerancePpm: B_TOL });
  sensorId = sensor.id;
  const site = await makeSite({ targets: [{ reflectancePct: 50 }] });
  siteId = site.id;
  // the one project listing the sensor and the site: its rule judges the report
  projectId = (await makeProject({ sensorIds: [sensorId], siteIds: [siteId], minShots: 4, coverageK: 2, minWithinPct: 50, memberIds: [crew.id, qa.id] })).id;
  // session A reads about 3 mm long, session B about 3 mm short
  await sync(
    [
      [5, 3.1, "A"],
      [15, 2.9, "A"],
      [40, 3.2, "A"],
      [5, 2.8, "A"],
      [5, -3.0, "B"],
      [15, -2.7, "B"],
      [40, -3.3, "B"],
      [15, -2.9, "B"],
    ],
    true,
  );
  // a second app instance: its own handle on the same database file, its own cache
  other = openDb(process.env.DATABASE_URL!);
});

afterAll(async () => {
  other?.$client.close();
  await smtp?.close();
});

test("a repeated view gives the same bytes; a new sync shows up in the next one", async () => {
  const first = await call(reportLoader, apiRequest(`/api/sensors/${sensorId}/report`, { user: qa }), { sensorId });
  const again = await call(reportLoader, apiRequest(`/api/sensors/${sensorId}/report`, { user: qa }), { sensorId });
  expect(again.text).toBe(first.text);
  expect(first.headers.get("Content-Type")).toBe("application/json");
  expect(Number(first.headers.get("Content-Length"))).toBe(new TextEncoder().encode(first.text).byteLength);
  expectFigures(first.json);
  await sync([
    [40, 2.5, "A"],
    [5, -2.2, "B"],
  ]);
  const after = await report();
  expect(after.n).toBe(10);
  expectFigures(after);
  expect(after.shots.map((s: { takenAt: string }) => s.takenAt)).toEqual([...known].sort((a, b) => (a.takenAt < b.takenAt ? -1 : 1)).map((k) => k.takenAt));
});

test("include=shots streams its rows page by page: across page edges they are the rows path's, in time order", async () => {
  setRowsPageForTests(3);
  try {
    const r = await report(); // compares the streamed rows with the rows path's, exactly
    expect(r.shots.length).toBe(known.length);
    expect(r.shots.length).toBeGreaterThan(6);
    expect(r.shots.map((s: { id: string }) => s.id)).toEqual([...known].sort((a, b) => (a.takenAt < b.takenAt ? -1 : a.takenAt > b.takenAt ? 1 : a.id < b.id ? -1 : 1)).map((k) => k.id));
    const w = await call(reportLoader, apiRequest(`/api/sensors/${sensorId}/report?include=shots`, { user: qa }), { sensorId });
    expect(w.headers.get("Content-Type")).toBe("application/json");
    expect(w.headers.get("Content-Length")).toBeNull(); // streamed
  } finally {
    setRowsPageForTests(null);
  }
});

test("an exclusion and its restore each show in the next report", async () => {
  await report(); // warm
  const target = known[2]!;
  const ex = await call(exclusionAction, apiRequest(`/api/shots/${target.id}/exclusion`, { user: qa, json: { reason: "board leaning in the wind" } }), { shotId: target.id });
  expect(ex.status).toBe(200);
  target.excluded = true;
  const R = await report();
  expectFigures(R);
  expect(R.shots.find((s: { id: string }) => s.id === target.id).excluded).toBe(true);
  const back = await call(exclusionAction, apiRequest(`/api/shots/${target.id}/exclusion`, { user: qa, method: "DELETE", json: { reason: "board was fine, checked the photo" } }), {
    shotId: target.id,
  });
  expect(back.status).toBe(200);
  target.excluded = false;
  const R2 = await report();
  expectFigures(R2);
  expect(R2.shots.find((s: { id: string }) => s.id === target.id).excluded).toBe(false);
});

test("a period or session view is kept apart and follows the changes too", async () => {
  const onlyA = await report(`?session=${sessions.A}`);
  expect(onlyA.n).toBe(included().filter((k) => k.ses === "A").length);
  const day5 = await report("?from=2026-05-05&to=2026-05-05");
  expect(day5.n).toBe(included().filter((k) => k.ses === "B").length);
  await sync([
    [15, 3.4, "A"],
    [40, -3.1, "B"],
  ]);
  expect((await report(`?session=${sessions.A}`)).n).toBe(onlyA.n + 1);
  expect((await report("?from=2026-05-05&to=2026-05-05")).n).toBe(day5.n + 1);
  expectFigures(await report());
});

test("a sensor spec edit (tolerance) changes every limit in the next report", async () => {
  const before = await report();
  const k = before.rule.coverageK;
  const body = {
    label: "Roof scanner R3",
    serial: "FH-R3-0001",
    kind: "pulsed",
    wavelengthNm: 905,
    appliesAirCorrection: true,
    assumedRefractivity: 0,
    toleranceMm: 4,
    tolerancePpm: 20,
    outdoor: true,
  };
  const u = await updateSensor({ id: admin.id }, sensorId, body);
  expect(u.status).toBe(200);
  const R = await report();
  for (const s of R.shots) {
    const kn = known.find((x) => x.id === s.id)!;
    expect(s.limitMm).toBeCloseTo(k * (4 + (20 * kn.D) / 1000), 9);
    expect(s.within).toBe(Math.abs(errOf(kn)) <= k * (4 + (20 * kn.D) / 1000));
  }
  expect(R.tests.find((t: { name: string }) => t.name === "bias").limit).toBe(4);
  // the sensor profile back as it was (a = 1 mm, b = 0 ppm)
  expect((await updateSensor({ id: admin.id }, sensorId, { ...body, toleranceMm: A_TOL, tolerancePpm: B_TOL })).status).toBe(200);
  expect((await report()).shots[0].limitMm).toBeCloseTo(k * A_TOL, 12);
});

test("a spec edit that recomputes the stored errors (assumed refractivity) shows the new errors", async () => {
  const before = await report();
  const body = {
    label: "Roof scanner R3",
    serial: "FH-R3-0001",
    kind: "pulsed",
    wavelengthNm: 905,
    appliesAirCorrection: false,
    assumedRefractivity: 300,
    toleranceMm: A_TOL,
    tolerancePpm: B_TOL,
    outdoor: true,
  };
  const u = await updateSensor({ id: admin.id }, sensorId, body);
  expect(u.status).toBe(200);
  expect((u.body as { recomputed?: number }).recomputed).toBe(known.length);
  const R = await report();
  // the sensor no longer corrects for air itself: each range gets the first velocity
  // correction, D = D′·(1 + K·1e-6), K = N_ref − N_L > 0 here, so every error grows with D
  for (const s of R.shots) {
    const was = before.shots.find((x: { id: string }) => x.id === s.id);
    expect(s.errorMm).not.toBe(was.errorMm);
    expect(s.errorMm).toBeGreaterThan(was.errorMm);
  }
  expect(R.biasMm).toBeCloseTo(mean(R.shots.filter((s: { excluded: boolean }) => !s.excluded).map((s: { errorMm: number }) => s.errorMm)), 9);
  expect((await updateSensor({ id: admin.id }, sensorId, { ...body, appliesAirCorrection: true, assumedRefractivity: 0 })).status).toBe(200);
  expectFigures(await report());
});

test("a rule edit of the project shows its coverage factor in the next report", async () => {
  const before = await report();
  expect(before.rule).toMatchObject({ minShots: 4, coverageK: 2, minWithinPct: 50 });
  const u = await updateProject({ id: admin.id }, projectId, {
    name: "River valley corridor",
    client: "Fernhollow Geomatics",
    minShots: 4,
    coverageK: 3,
    minWithinPct: 50,
    sensorIds: [sensorId],
    siteIds: [siteId],
  });
  expect(u.status).toBe(200);
  const R = await report();
  expect(R.rule).toMatchObject({ minShots: 4, coverageK: 3, minWithinPct: 50 });
  for (const s of R.shots) expect(s.limitMm).toBeCloseTo(3 * A_TOL, 12);
  const inc = included();
  expect(R.withinPct).toBeCloseTo((100 * inc.filter((k) => Math.abs(errOf(k)) <= 3 * A_TOL).length) / inc.length, 9);
});

test("an approved sign-off flags the drift of sessions far from its bias in the next report", async () => {
  const before = await report();
  expect(before.drift.every((d: { flag: boolean }) => d.flag === false)).toBe(true); // nothing signed yet
  const s = await createSignOff({ id: qa.id, role: "qa", email: qa.email }, sensorId, { decision: "approved", note: "approved for the corridor survey with a known split between days" });
  const signedBias = mean(included().map(errOf)); // the bias frozen into the sign-off
  expect(s.id).toBeTruthy();
  const R = await report();
  for (const d of R.drift) {
    const ses = d.sessionId === sessions.A ? "A" : "B";
    const inc = included().filter((k) => k.ses === ses);
    const bias = mean(inc.map(errOf));
    expect(d.biasMm).toBeCloseTo(bias, 9);
    expect(d.flag).toBe(Math.abs(bias - signedBias) > A_TOL + (B_TOL * mean(inc.map((k) => k.D))) / 1000);
  }
  expect(R.drift.some((d: { flag: boolean }) => d.flag)).toBe(true);
});

test("a change made through another app instance shows here, and this instance's changes show there", async () => {
  const mine = await report();
  const theirs = await computeSensorReport(qa, sensorId, {}, {}, other);
  if (theirs.status !== 200) throw new Error("no report on the other instance");
  expect(theirs.body.n).toBe(mine.n);
  // the other instance excludes a shot: this one sees it at once
  const target = known[5]!;
  const ex = await excludeShot({ id: qa.id, role: "qa" }, target.id, { reason: "reflector smeared with mud" }, other);
  expect(ex.status).toBe(200);
  target.excluded = true;
  expectFigures(await report());
  // this instance syncs: the other one, warm before, sees the new shot
  await sync([[5, 2.6, "A"]]);
  const there = await computeSensorReport(qa, sensorId, {}, {}, other);
  if (there.status !== 200) throw new Error("no report on the other instance");
  expectFigures(there.body as never);
});

test("shots synced here and through another instance between two views all show, once each", async () => {
  await report(); // warm: this instance keeps the rows
  // the other instance takes a sync of this sensor…
  const theirs = [shotBody(15, 2.4, "A"), shotBody(40, -2.8, "B")];
  const a = await ingestSync({ id: crew.id, role: "crew" }, { deviceId: "tablet-other", sessions: [], shots: theirs.map((m) => m.body) }, other);
  expect((a.body as { results: { status: string }[] }).results.map((r) => r.status)).toEqual(["accepted", "accepted"]);
  for (const m of theirs) known.push({ id: m.id, D: m.D, e: m.e, ses: m.ses, excluded: false, takenAt: m.takenAt });
  // …and this one another: it holds its own new rows, not the other instance's
  await sync([
    [5, 2.9, "A"],
    [15, -3.0, "B"],
  ]);
  expectFigures(await report());
  const R = await report("?include=shots");
  expectFigures(R);
  expect(new Set(R.shots.map((s: { id: string }) => s.id)).size).toBe(known.length);
  // and once more, now that nothing new came from elsewhere
  await sync([[40, 3.3, "A"]]);
  expectFigures(await report());
});

test("a kept report equals one computed from nothing on another handle, and the rows path agrees", async () => {
  await report();
  await sync([
    [40, 3.0, "A"],
    [15, -3.2, "B"],
    [5, 2.7, "A"],
  ]);
  const target = known[known.length - 2]!; // one of the shots just appended
  const ex = await call(exclusionAction, apiRequest(`/api/shots/${target.id}/exclusion`, { user: qa, json: { reason: "tripod kicked during the reading" } }), { shotId: target.id });
  expect(ex.status).toBe(200);
  target.excluded = true;
  const keptOnly = async () => (await call(reportLoader, apiRequest(`/api/sensors/${sensorId}/report`, { user: qa }), { sensorId })).json;
  const kept = await keptOnly();
  expectFigures(kept);
  expect(await keptOnly()).toEqual(kept);
  const fresh = openDb(process.env.DATABASE_URL!);
  try {
    const cold = await sensorReportJson(qa, sensorId, {}, fresh);
    if (cold.status !== 200 || !("json" in cold)) throw new Error("no cold report");
    expect(JSON.parse(new TextDecoder().decode(cold.json))).toEqual(kept);
  } finally {
    fresh.$client.close();
  }
  clearReportCache(getDb());
  expect(await keptOnly()).toEqual(kept);
  // the rows path (every shot read, summed in JS): the same figures to far below 0.01 mm
  const fromShots = await computeSensorReport(qa, sensorId, {});
  if (fromShots.status !== 200) throw new Error(JSON.stringify(fromShots.body));
  const { shots, ...withRows } = fromShots.body;
  expectFigures({ ...withRows, biasMm: withRows.biasMm ?? Number.NaN, shots });
  for (const k of ["biasMm", "sdMm", "rmseMm", "p95AbsMm", "zeroOffsetMm", "scalePpm", "zeroOffsetSeMm"] as const) expect(withRows[k]).toBeCloseTo(kept[k], 9);
  expect(withRows.n).toBe(kept.n);
});
