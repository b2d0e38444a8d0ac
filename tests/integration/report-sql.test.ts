// issue 16: the report's figures now come from SQL sums per group and from the error index
// (sorted errors), the per-shot rows only with include=shots. Cases where that path could part
// from the definitions: ties at the quantiles, even and odd n, excluded shots, outliers by
// median/MAD, distances exactly on band edges, and a member's project filter (api.md v1.1).
// Every expected figure is worked out HERE from ranging.md §4–5 (type-7 quantile by hand:
// Hyndman & Fan 1996; mean, SD n − 1, RMSE), never by calling app/domain.
import { beforeAll, expect, test } from "vitest";
import { action as syncAction } from "~/routes/api.sync";
import { loader as reportLoader } from "~/routes/api.sensors.$sensorId.report";
import { loader as sensorsLoader } from "~/routes/api.sensors";
import { action as exclusionAction } from "~/routes/api.shots.$shotId.exclusion";
import { addMemberIds, apiRequest, call, makeProject, makeSensor, makeSite, makeUser, type TestUser } from "../support/registry-fixtures";

// [reference D (m), error (mm), session]; D on the default band edges 10, 30 and 100 m on purpose
type Row = [number, number, "A" | "B"];
const DATA: Row[] = [
  [10, 1.0, "A"],
  [10, 1.0, "A"],
  [10, 1.0, "A"],
  [10, 2.0, "A"],
  [30, 2.0, "A"],
  [30, -1.0, "A"],
  [100, 0.5, "A"],
  [100, 3.0, "A"],
  [9.999, 1.0, "A"],
  [29.999, -2.5, "A"],
  [99.999, 1.5, "A"],
  [10, 1.0, "B"],
  [30, 2.0, "B"],
  [100, 0.5, "B"],
  [5, 1.5, "B"],
  [5, 1.5, "B"],
  [150, 60.0, "B"],
  [150, -0.5, "B"],
  [5, 9.0, "B"], // excluded below
];
const EXCLUDED = 18;
const TOL_MM = 5;
const EDGES = [0, 10, 30, 100];

let admin: TestUser;
let memberA: TestUser;
let outsider: TestUser;
let sensorId: string;
const ids: string[] = [];
const ses = { A: crypto.randomUUID(), B: crypto.randomUUID() };

beforeAll(async () => {
  let crew: TestUser, qa: TestUser;
  [crew, qa, admin, memberA, outsider] = await Promise.all([makeUser("crew"), makeUser("qa"), makeUser("admin"), makeUser("viewer"), makeUser("viewer")]);
  sensorId = (await makeSensor({ label: "Band edge scanner", toleranceMm: TOL_MM, tolerancePpm: 0 })).id;
  const site = await makeSite({ targets: [{ reflectancePct: 50 }] });
  // two projects share the sensor and site: each session names its own
  const pA = await makeProject({ name: "Quarry north face", sensorIds: [sensorId], siteIds: [site.id] });
  const pB = await makeProject({ name: "Harbour wall", sensorIds: [sensorId], siteIds: [site.id] });
  await addMemberIds(pA.id, memberA.id, crew.id, qa.id);
  await addMemberIds(pB.id, crew.id, qa.id);
  await makeProject({ name: "Unrelated survey" }).then((p) => addMemberIds(p.id, outsider.id));
  const sessions = [
    { id: ses.A, sensorId, siteId: site.id, projectId: pA.id, startedAt: "2026-06-01T08:00:00+02:00", airTempC: 15, pressureHpa: 1010, humidityPct: 60 },
    { id: ses.B, sensorId, siteId: site.id, projectId: pB.id, startedAt: "2026-06-02T08:00:00+02:00", airTempC: 15, pressureHpa: 1010, humidityPct: 60 },
  ];
  const shots = DATA.map(([D, e, s], i) => {
    const id = crypto.randomUUID();
    ids.push(id);
    return {
      id,
      sessionId: ses[s],
      takenAt: `2026-06-0${s === "A" ? 1 : 2}T10:${String(i).padStart(2, "0")}:00+02:00`,
      targetId: site.targets[0]!.id,
      reference: { method: "edm", distanceM: D },
      readings: { rangesM: [D + e / 1000] },
      reflectancePct: 50,
      illuminanceKlux: 20,
    };
  });
  const a = await call(syncAction, apiRequest("/api/sync", { user: crew, json: { deviceId: "tablet-edge", sessions, shots } }));
  expect(a.json.results.map((r: { status: string }) => r.status)).toEqual(Array(DATA.length + 2).fill("accepted"));
  const ex = await call(exclusionAction, apiRequest(`/api/shots/${ids[EXCLUDED]}/exclusion`, { user: qa, json: { reason: "board knocked by a cyclist" } }), { shotId: ids[EXCLUDED]! });
  expect(ex.status).toBe(200);
});

const get = (query: string, user: TestUser) => call(reportLoader, apiRequest(`/api/sensors/${sensorId}/report${query}`, { user }), { sensorId });

// ---------- first principles ----------
const errOf = ([D, e]: Row) => (D + e / 1000 - D) * 1000; // the float the server stores
const mean = (x: number[]) => x.reduce((s, v) => s + v, 0) / x.length;
const sd = (x: number[]) => Math.sqrt(x.reduce((s, v) => s + (v - mean(x)) ** 2, 0) / (x.length - 1));
const rms = (x: number[]) => Math.sqrt(x.reduce((s, v) => s + v * v, 0) / x.length);
/** Hyndman–Fan type 7: h = (n − 1)p, linear between the order statistics around h. */
const type7 = (x: number[], p: number) => {
  const s = [...x].sort((a, b) => a - b);
  const h = (s.length - 1) * p;
  const lo = Math.floor(h);
  return s[lo]! + (h - lo) * (s[Math.min(lo + 1, s.length - 1)]! - s[lo]!);
};
const bandOf = (D: number) => {
  let i = -1;
  for (let k = 0; k < EDGES.length; k++) if (D >= EDGES[k]!) i = k;
  return i === EDGES.length - 1 ? `${EDGES[i]}+` : `${EDGES[i]}-${EDGES[i + 1]}`;
};

function expectFiguresOf(R: Record<string, unknown> & { byRange: { band: string; n: number; biasMm: number }[] }, rows: Row[]) {
  const e = rows.map(errOf);
  expect(R.n).toBe(e.length);
  expect(R.biasMm as number).toBeCloseTo(mean(e), 9);
  expect(R.sdMm as number).toBeCloseTo(sd(e), 9);
  expect(R.rmseMm as number).toBeCloseTo(rms(e), 9);
  expect(R.p95AbsMm as number).toBeCloseTo(type7(e.map(Math.abs), 0.95), 9);
  expect(R.maxAbsMm as number).toBeCloseTo(Math.max(...e.map(Math.abs)), 12);
  // limit k · T(D) = 2 · 5 mm (no ppm part)
  expect(R.withinPct as number).toBeCloseTo((100 * e.filter((v) => Math.abs(v) <= 2 * TOL_MM).length) / e.length, 9);
  const bands = [...new Set(rows.map(([D]) => bandOf(D)))];
  expect(R.byRange.map((b) => b.band).sort()).toEqual(bands.sort());
  for (const b of R.byRange) {
    const inBand = rows.filter(([D]) => bandOf(D) === b.band).map(errOf);
    expect(b.n).toBe(inBand.length);
    expect(b.biasMm).toBeCloseTo(mean(inBand), 9);
  }
}

const included = DATA.filter((_, i) => i !== EXCLUDED);

test("even n with ties at the median, distances on band edges, one excluded shot: the same figures by both paths", async () => {
  expect(included.length % 2).toBe(0);
  for (const q of ["", "?include=shots"]) {
    const R = (await get(q, admin)).json;
    expectFiguresOf(R, included);
    expect(R.excluded).toBe(1);
  }
});

test("odd n (one session) and its period: the middle order statistic itself", async () => {
  const a = DATA.filter(([, , s], i) => s === "A" && i !== EXCLUDED);
  expect(a.length % 2).toBe(1);
  expectFiguresOf((await get(`?session=${ses.A}`, admin)).json, a);
  expectFiguresOf((await get("?from=2026-06-01&to=2026-06-01", admin)).json, a);
});

test("the outlier flag follows |e − median| > 3 · 1.4826 · MAD over the included shots, ties and all", async () => {
  const e = included.map(errOf);
  const med = type7(e, 0.5);
  const madv = type7(
    e.map((v) => Math.abs(v - med)),
    0.5,
  );
  const cut = 3 * 1.4826 * madv;
  const R = (await get("?include=shots", admin)).json;
  const flagged = new Set(R.shots.filter((s: { flags: string[] }) => s.flags.includes("outlier")).map((s: { id: string }) => s.id));
  const expected = DATA.map((r, i) => [ids[i]!, Math.abs(errOf(r) - med) > cut] as const)
    .filter(([, f]) => f)
    .map(([id]) => id);
  expect([...flagged].sort()).toEqual(expected.sort());
  expect(flagged.has(ids[16]!)).toBe(true); // the 60 mm shot
  expect(flagged.has(ids[EXCLUDED]!)).toBe(true); // judged against the included shots, flagged all the same
  expect(flagged.size).toBeLessThan(DATA.length / 2);
});

test("a member of one project sees the figures of that project's session only; a non-member gets 404", async () => {
  const a = DATA.filter(([, , s], i) => s === "A" && i !== EXCLUDED);
  for (const q of ["", "?include=shots"]) {
    const R = (await get(q, memberA)).json;
    expectFiguresOf(R, a);
    expect(R.excluded).toBe(0);
    expect(R.drift.map((d: { sessionId: string }) => d.sessionId)).toEqual([ses.A]);
    if (R.shots) expect(R.shots.every((s: { sessionId: string }) => s.sessionId === ses.A)).toBe(true);
  }
  // the same figures asked again come from the kept report: still the member's own
  expectFiguresOf((await get("", memberA)).json, a);
  expectFiguresOf((await get("", admin)).json, included);
  const no = await get("", outsider);
  expect(no.status).toBe(404);
  expect((await get("", memberA)).status).toBe(200);
  // the sensor list: the member sees the sensor with their own n; the outsider does not see it
  const list = await call(sensorsLoader, apiRequest("/api/sensors", { user: memberA }));
  expect(list.json.sensors.find((s: { id: string }) => s.id === sensorId)).toMatchObject({ n: a.length });
  const theirs = await call(sensorsLoader, apiRequest("/api/sensors", { user: outsider }));
  expect(theirs.json.sensors.find((s: { id: string }) => s.id === sensorId)).toBeUndefined();
});

test("a rule of a project the reader is not in answers 404, like an unknown project", async () => {
  const other = await makeProject({ name: "Someone else's rule", minShots: 3 });
  expect((await get(`?project=${other.id}`, memberA)).status).toBe(404);
  expect((await get(`?project=${other.id}`, admin)).status).toBe(200);
});
