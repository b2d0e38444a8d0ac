// issue 16 (u16): report_sums is kept by SQL triggers on shots (migration 0011) and the report
// regroups it by the rule's bands instead of scanning every shot. Two things are checked here:
// 1. after inserts, exclusions, recomputed columns, moves between sessions and deletes, every
//    kept row equals the sums of its shots worked out here from their definitions (n, Σe, Σe²,
//    ΣD, ΣD², ΣDe, Σu², counts; first principles, the un-shifted sums read back as
//    s1 + n·k_e, …), and groups left empty are gone;
// 2. the report from the kept sums equals the report from the grouped scan (a period covering
//    every shot forces the scan) and from the shots themselves (include=shots), with shots
//    outside their limit below and above k·a (ranging.md §6: |e| ≤ k·(a + b·D/1000)) and
//    distances on the band edges; a rule with an edge that is not a whole metre falls back.
import { eq, sql } from "drizzle-orm";
import { beforeAll, expect, test } from "vitest";
import { getDb } from "~/db/client.server";
import { projects } from "~/db/schema";
import { clearReportCache, sensorReportFor, sensorReportJson } from "~/models/reports.server";
import { sortedErrorsChunked } from "~/models/report-sums.server";
import { selectionWhere } from "~/models/report-selection.server";
import { action as syncAction } from "~/routes/api.sync";
import { addMemberIds, apiRequest, call, makeProject, makeSensor, makeSite, makeUser } from "../support/registry-fixtures";

type KeptRow = {
  session_id: string;
  excl: number;
  rc: number;
  lb: number;
  dbin: number;
  n: number;
  k_e: number;
  k_d: number;
  s1: number;
  s2: number;
  sq: number;
  d1: number;
  d2: number;
  de: number;
  sum_d: number;
  sum_u2: number;
  unknown_u: number;
  sun: number;
  air: number;
};
type ShotRow = {
  session_id: string;
  excluded: number;
  retro: number;
  reflectance_pct: number;
  illuminance_klux: number | null;
  reference_m: number;
  error_mm: number;
  reference_uncertainty_mm: number | null;
  air_defaulted: number;
};

const db = () => getDb();

/** ranging.md §5 classes, written out here (dark < 20 %, mid 20–60 % inclusive, bright > 60 %, retro; low < 10, moderate < 50, high). */
const classOf = (s: ShotRow) => ({
  rc: s.retro ? 3 : s.reflectance_pct < 20 ? 0 : s.reflectance_pct <= 60 ? 1 : 2,
  lb: s.illuminance_klux == null ? -1 : s.illuminance_klux < 10 ? 0 : s.illuminance_klux < 50 ? 1 : 2,
});

const close = (a: number, b: number, what: string) => {
  if (Math.abs(a - b) > 1e-9 * Math.max(1, Math.abs(a), Math.abs(b))) throw new Error(`${what}: kept ${a}, from the shots ${b}`);
};

/** Every kept row of the sensor against its shots summed here; every group of shots has its row. */
async function expectKeptEqualsShots(sensorId: string) {
  const kept = await db().all<KeptRow>(sql`SELECT * FROM report_sums WHERE sensor_id = ${sensorId}`);
  const list = await db().all<ShotRow>(
    sql`SELECT session_id, excluded, retro, reflectance_pct, illuminance_klux, reference_m, error_mm, reference_uncertainty_mm, air_defaulted FROM shots WHERE sensor_id = ${sensorId}`,
  );
  type Want = { n: number; e: number; e2: number; d: number; d2: number; de: number; u2: number; unknown: number; sun: number; air: number };
  const want = new Map<string, Want>();
  for (const s of list) {
    const { rc, lb } = classOf(s);
    const key = `${s.session_id}|${s.excluded ? 1 : 0}|${rc}|${lb}|${Math.floor(s.reference_m)}`;
    const w = want.get(key) ?? { n: 0, e: 0, e2: 0, d: 0, d2: 0, de: 0, u2: 0, unknown: 0, sun: 0, air: 0 };
    const u = s.reference_uncertainty_mm;
    w.n++;
    w.e += s.error_mm;
    w.e2 += s.error_mm ** 2;
    w.d += s.reference_m;
    w.d2 += s.reference_m ** 2;
    w.de += s.reference_m * s.error_mm;
    if (u != null && u >= 0) w.u2 += u * u;
    else w.unknown++;
    if (s.illuminance_klux != null && s.illuminance_klux >= 50) w.sun++;
    if (s.air_defaulted) w.air++;
    want.set(key, w);
  }
  expect(kept.length, "one kept row per group of shots, none left empty").toBe(want.size);
  for (const r of kept) {
    const key = `${r.session_id}|${r.excl}|${r.rc}|${r.lb}|${r.dbin}`;
    const w = want.get(key);
    expect(w, `kept row ${key} has shots`).toBeDefined();
    expect(r.n, key).toBe(w!.n);
    // the shifted sums back to plain ones: Σe = s1 + n·k_e, Σe² = s2 + 2k_e·s1 + n·k_e², …
    close(r.s1 + r.n * r.k_e, w!.e, `${key} Σe`);
    close(r.s2 + 2 * r.k_e * r.s1 + r.n * r.k_e ** 2, w!.e2, `${key} Σe² (shifted)`);
    close(r.sq, w!.e2, `${key} Σe²`);
    close(r.d1 + r.n * r.k_d, w!.d, `${key} ΣD`);
    close(r.sum_d, w!.d, `${key} ΣD (sum_d)`);
    close(r.d2 + 2 * r.k_d * r.d1 + r.n * r.k_d ** 2, w!.d2, `${key} ΣD²`);
    close(r.de + r.k_e * r.d1 + r.k_d * r.s1 + r.n * r.k_d * r.k_e, w!.de, `${key} ΣDe`);
    close(r.sum_u2, w!.u2, `${key} Σu²`);
    expect([r.unknown_u, r.sun, r.air], key).toEqual([w!.unknown, w!.sun, w!.air]);
  }
}

let sensorId: string;
let admin: Awaited<ReturnType<typeof makeUser>>;
let projectId: string;
const ses = { A: crypto.randomUUID(), B: crypto.randomUUID() };
const ids: string[] = [];
// [D (m), e (mm), session, reflectance %, klux]: a = 5 mm, b = 100 ppm, k = 2, so the limit is
// 10 mm + 0.2 mm per metre: 12 mm at 10 m, 30 mm at 100 m. Shots above k·a = 10 mm but within
// (e = 20 at 100 m), outside below and above (e = −14 and 12.5 at 10 m, −16.5 just under 30 m,
// 40 at 150 m), on every edge.
const DATA: [number, number, "A" | "B", number, number | null][] = [
  [10, 1.0, "A", 10, 5],
  [10, 1.0, "A", 10, 5],
  [10, -14.0, "A", 50, 20],
  [9.999, 2.5, "A", 85, 60],
  [30, 11.0, "A", 85, 60],
  [29.999, -16.5, "A", 50, null],
  [100, 20.0, "A", 10, 20],
  [100, 0.5, "B", 10, 20],
  [99.999, -1.5, "B", 50, 80],
  [150, 40.0, "B", 85, 5],
  [150, -0.5, "B", 85, 5],
  [5, 1.5, "B", 50, 20],
  [5, 1.5, "B", 50, 20],
  [45.5, 3.25, "B", 70, 49.9],
  [45.7, -2.0, "A", 20, 50],
  [10, 12.5, "B", 50, 20],
];

beforeAll(async () => {
  const crew = await makeUser("crew");
  admin = await makeUser("admin");
  sensorId = (await makeSensor({ label: "Kept sums scanner", toleranceMm: 5, tolerancePpm: 100 })).id;
  const site = await makeSite({ targets: [{ reflectancePct: 50 }] });
  const p = await makeProject({ name: "Quarry north face", sensorIds: [sensorId], siteIds: [site.id] });
  projectId = p.id;
  await addMemberIds(p.id, crew.id);
  const sessions = (["A", "B"] as const).map((s, i) => ({
    id: ses[s],
    sensorId,
    siteId: site.id,
    projectId: p.id,
    startedAt: `2026-06-0${i + 1}T08:00:00+02:00`,
    airTempC: 15,
    pressureHpa: 1010,
    humidityPct: 60,
  }));
  const shots = DATA.map(([D, e, s, refl, klux], i) => {
    const id = crypto.randomUUID();
    ids.push(id);
    return {
      id,
      sessionId: ses[s],
      takenAt: `2026-06-0${s === "A" ? 1 : 2}T10:${String(i).padStart(2, "0")}:00+02:00`,
      targetId: site.targets[0]!.id,
      reference: { method: "edm", distanceM: D },
      readings: { rangesM: [D + e / 1000] },
      reflectancePct: refl,
      illuminanceKlux: klux,
    };
  });
  const r = await call(syncAction, apiRequest("/api/sync", { user: crew, json: { deviceId: "tablet-kept", sessions, shots } }));
  expect(r.json.results.every((x: { status: string }) => x.status === "accepted")).toBe(true);
});

test("the kept sums follow inserts, exclusions, recomputed columns, moves and deletes of shots", async () => {
  await expectKeptEqualsShots(sensorId);
  // an exclusion and a restore (as app/models does: update of excluded)
  await db().run(sql`UPDATE shots SET excluded = 1 WHERE id = ${ids[2]}`);
  await db().run(sql`UPDATE shots SET excluded = 1 WHERE id = ${ids[9]}`);
  await expectKeptEqualsShots(sensorId);
  await db().run(sql`UPDATE shots SET excluded = 0 WHERE id = ${ids[9]}`);
  await expectKeptEqualsShots(sensorId);
  // a recomputation rewrites the computed columns (new distance, error, u_ref, air flag)
  await db().run(
    sql`UPDATE shots SET reference_m = reference_m + 0.75, error_mm = error_mm - 0.125, reference_uncertainty_mm = NULL, air_defaulted = 1 WHERE id IN (${ids[0]}, ${ids[5]}, ${ids[13]})`,
  );
  await expectKeptEqualsShots(sensorId);
  // an update of nothing summed changes nothing; one to the same values neither
  await db().run(sql`UPDATE shots SET note = 'windy', error_mm = error_mm WHERE sensor_id = ${sensorId}`);
  await expectKeptEqualsShots(sensorId);
  // a shot moved to the other session, illuminance and reflectance changed
  await db().run(sql`UPDATE shots SET session_id = ${ses.B}, illuminance_klux = 75, reflectance_pct = 15, retro = 1 WHERE id = ${ids[1]}`);
  await expectKeptEqualsShots(sensorId);
  // deletes (a removed sensor takes its shots with it): a group emptied disappears
  const [{ before }] = await db().all<{ before: number }>(sql`SELECT count(*) AS before FROM report_sums WHERE sensor_id = ${sensorId}`);
  await db().run(sql`PRAGMA foreign_keys = OFF`);
  await db().run(sql`DELETE FROM shots WHERE id IN (${ids[9]}, ${ids[10]})`); // the two at 150 m, bright, low light, session B
  await db().run(sql`PRAGMA foreign_keys = ON`);
  await expectKeptEqualsShots(sensorId);
  const [{ after }] = await db().all<{ after: number }>(sql`SELECT count(*) AS after FROM report_sums WHERE sensor_id = ${sensorId}`);
  expect(after).toBe(before - 1);
});

/** Every number of a and b within 1e-9 (relative above 1), other values equal. */
function expectSameFigures(a: unknown, b: unknown, path = "report"): void {
  if (typeof a === "number" && typeof b === "number") {
    if (Math.abs(a - b) > 1e-9 * Math.max(1, Math.abs(a))) throw new Error(`${path}: ${a} ≠ ${b}`);
  } else if (a && b && typeof a === "object" && typeof b === "object") {
    expect(Object.keys(a)).toEqual(Object.keys(b));
    for (const k of Object.keys(a)) expectSameFigures((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k], `${path}.${k}`);
  } else expect(a, path).toEqual(b);
}

/** The admin's report three ways: from the kept sums, by the grouped scan (a period holding every shot) and from the shots. */
async function threeWays(q: { sessionIds?: string[] } = {}) {
  clearReportCache(getDb());
  const get = async (query: Parameters<typeof sensorReportFor>[1], rows: boolean) => {
    const r = rows ? await sensorReportFor(sensorId, query, null) : await sensorReportJson({ id: admin.id, role: admin.role }, sensorId, query);
    if (r.status !== 200) throw new Error(JSON.stringify(r.body));
    if ("stream" in r) throw new Error("a report without rows is bytes, not a stream");
    return "json" in r ? JSON.parse(new TextDecoder().decode(r.json)) : r.body;
  };
  const kept = await get(q, false);
  const scanned = await get({ ...q, from: "2000-01-01", to: "2099-12-31" }, false);
  const { shots: _rows, ...fromShots } = await get({ ...q, includeShots: true }, true);
  return { kept, scanned, fromShots };
}

test("the report from the kept sums equals the grouped scan's and the shots' own, within and outside the limits", async () => {
  const { kept, scanned, fromShots } = await threeWays();
  expectSameFigures(kept, scanned);
  expectSameFigures(kept, fromShots);
  // worked out from the shots as they are now (after the first test's changes): within = |e| ≤ 2·(5 + 100·D/1000)
  const list = await db().all<{ reference_m: number; error_mm: number }>(sql`SELECT reference_m, error_mm FROM shots WHERE sensor_id = ${sensorId} AND excluded = 0`);
  const within = list.filter((s) => Math.abs(s.error_mm) <= 2 * (5 + (100 * s.reference_m) / 1000)).length;
  expect(within).toBeLessThan(list.length); // some shots are outside, so the count is tested
  expect(kept.n).toBe(list.length);
  expect(kept.withinPct).toBeCloseTo((100 * within) / list.length, 9);
  expect(kept.maxAbsMm).toBe(Math.max(...list.map((s) => Math.abs(s.error_mm))));
  // one session's view
  const one = await threeWays({ sessionIds: [ses.A] });
  expectSameFigures(one.kept, one.scanned);
  expectSameFigures(one.kept, one.fromShots);
});

test("a rule whose band edges are not whole metres is reported by the grouped scan, with the same figures", async () => {
  await db()
    .update(projects)
    .set({ rangeBandEdgesM: [0, 12.5, 45.6, 100] })
    .where(eq(projects.id, projectId));
  const { kept, scanned, fromShots } = await threeWays();
  expect(kept.byRange.map((b: { band: string }) => b.band)).toContain("12.5-45.6");
  expectSameFigures(kept, scanned);
  expectSameFigures(kept, fromShots);
});

test("the included errors read a chunk at a time are the whole sorted list, with runs of ties longer than a chunk", async () => {
  // first principles: the sensor's included errors sorted here; a run of 7 equal values and
  // other ties, read in chunks of 1 to 9 (each chunk resumes at its last value past the ties taken)
  await db().run(sql`UPDATE shots SET error_mm = 2.5 WHERE id IN (${ids[3]}, ${ids[4]}, ${ids[6]}, ${ids[7]}, ${ids[8]}, ${ids[11]}, ${ids[12]})`);
  const list = await db().all<{ e: number }>(sql`SELECT error_mm AS e FROM shots WHERE sensor_id = ${sensorId} AND excluded = 0`);
  const want = list.map((r) => r.e).sort((a, b) => a - b);
  expect(want.filter((e) => e === 2.5).length).toBe(7);
  const where = selectionWhere(db(), sensorId, {}, null);
  for (let chunk = 1; chunk <= 9; chunk++) {
    const tx = await db().$client.transaction("read");
    try {
      expect([...(await sortedErrorsChunked(tx, where, want.length, chunk))!], `chunks of ${chunk}`).toEqual(want);
      // a count that is not the shots' is refused (the caller then scans)
      expect(await sortedErrorsChunked(tx, where, want.length - 1, chunk)).toBeNull();
    } finally {
      tx.close();
    }
  }
});
