// The demo seed on a fresh per-file database, through the real registry and sync models; the
// three outcomes the demo exists to show are read back from the server-computed shots.
import { count, eq } from "drizzle-orm";
import { beforeAll, expect, test } from "vitest";
import { getDb } from "~/db/client.server";
import { checkSessions, projects, sensors, shots, sites, targets, users } from "~/db/schema";
import { buildDemoScenario, DEMO_IDS, type DemoScenario } from "~/seed/scenario";
import { demoIsSeeded, seedDemo, type SeedSummary } from "~/seed/seed.server";
import type { SQLiteTable } from "drizzle-orm/sqlite-core";
import { buildSensorReport, listSensorSummaries } from "~/models/reports.server";

let scenario: DemoScenario;
let summary: SeedSummary;

beforeAll(async () => {
  scenario = buildDemoScenario();
  expect(await demoIsSeeded()).toBe(false);
  summary = await seedDemo(scenario);
}, 120_000);

async function rows(table: SQLiteTable) {
  const [r] = await getDb().select({ n: count() }).from(table);
  return r!.n;
}

/** The sensor's report as GET /api/sensors/:id/report gives it, asked by the QA lead. */
async function sensorReportFor(sensorId: string) {
  const report = await buildSensorReport(qa(), sensorId);
  expect(report).not.toBeNull();
  return report!;
}

function qa() {
  const u = summary.users.find((x) => x.role === "qa")!;
  return { id: u.id, role: u.role };
}

test("seeding a fresh database gives the demo's counts and every synced record is accepted", async () => {
  expect(summary.results.rejected).toEqual([]);
  expect(summary.results.duplicate).toBe(0);
  expect(summary.results.accepted).toBe(scenario.sessions.length + scenario.shots.length);
  expect(await rows(sensors)).toBe(3);
  expect(await rows(sites)).toBe(2);
  expect(await rows(users)).toBe(5);
  expect(await rows(projects)).toBe(2);
  expect(await rows(targets)).toBe(summary.targets);
  expect(await rows(checkSessions)).toBeGreaterThanOrEqual(6);
  expect(await rows(shots)).toBeGreaterThanOrEqual(300);
  const roles = (await getDb().select({ role: users.role }).from(users)).map((u) => u.role).sort();
  expect(roles).toEqual(["admin", "crew", "qa", "viewer", "viewer"]);
  expect(await demoIsSeeded()).toBe(true);
});

test("the sensor overview (GET /api/sensors) shows pass, fail and not enough shots", async () => {
  const out = await listSensorSummaries(qa());
  expect(out.status).toBe(200);
  const verdicts = Object.fromEntries((out.body as { sensors: { id: string; verdict: string }[] }).sensors.map((s) => [s.id, s.verdict]));
  expect(verdicts).toEqual({ [DEMO_IDS.roof]: "pass", [DEMO_IDS.tripod]: "fail", [DEMO_IDS.camera]: "insufficient" });
});

test("sessions land in the project and the session without humidity is marked as defaulted air", async () => {
  const sessionRows = await getDb().select({ id: checkSessions.id, projectId: checkSessions.projectId, humidityPct: checkSessions.humidityPct }).from(checkSessions);
  // issue 14: the tripod's dawn repeat at the yard belongs to the quarry client; every other session to the river valley road
  const byProject = (p: string) =>
    sessionRows
      .filter((s) => s.projectId === p)
      .map((s) => s.id)
      .sort();
  const quarry = scenario.sessions
    .filter((s) => s.projectId === DEMO_IDS.quarry)
    .map((s) => s.id)
    .sort();
  expect(quarry).toHaveLength(1);
  expect(byProject(DEMO_IDS.quarry)).toEqual(quarry);
  expect(byProject(DEMO_IDS.project)).toHaveLength(sessionRows.length - 1);
  const noHumidity = sessionRows.filter((s) => s.humidityPct == null).map((s) => s.id);
  expect(noHumidity).toHaveLength(1);
  const defaulted = await getDb().selectDistinct({ sessionId: shots.sessionId }).from(shots).where(eq(shots.airDefaulted, true));
  expect(defaulted.map((d) => d.sessionId)).toEqual(noHumidity);
  const roof = await sensorReportFor(DEMO_IDS.roof);
  expect(roof.airDefaulted).toEqual(noHumidity);
});

test("the roof scanner passes its tolerance", async () => {
  const r = await sensorReportFor(DEMO_IDS.roof);
  expect(r.n).toBeGreaterThanOrEqual(100);
  expect(r.verdict).toBe("pass");
  expect(r.tests.every((t) => t.pass)).toBe(true);
  expect(Math.abs(r.biasMm!)).toBeLessThan(8);
});

test("the tripod scanner fails, and the breakdowns point at dark targets in bright sun", async () => {
  const r = await sensorReportFor(DEMO_IDS.tripod);
  expect(r.verdict).toBe("fail");
  const failed = r.tests.filter((t) => !t.pass).map((t) => t.name);
  expect(failed.some((n) => n === "within" || n === "bias")).toBe(true);

  const dark = r.byReflectance.find((b) => b.band === "dark")!;
  const others = r.byReflectance.filter((b) => b.band !== "dark");
  for (const o of others) expect(dark.biasMm! - o.biasMm!).toBeGreaterThan(2);
  const high = r.byIlluminance.find((b) => b.band === "high")!;
  const low = r.byIlluminance.find((b) => b.band === "low")!;
  expect(high.biasMm! - low.biasMm!).toBeGreaterThan(1.5);
  expect(high.withinPct!).toBeLessThan(low.withinPct!);

  // the crossed cell (dark × ≥ 50 klux) from the server's own per-shot errors
  const stored = await getDb()
    .select({ id: shots.id, errorMm: shots.errorMm, within: shots.within, reflectancePct: shots.reflectancePct, illuminanceKlux: shots.illuminanceKlux })
    .from(shots)
    .where(eq(shots.sensorId, DEMO_IDS.tripod));
  const inCell = stored.filter((s) => s.reflectancePct < 20 && (s.illuminanceKlux ?? 0) >= 50);
  const rest = stored.filter((s) => !(s.reflectancePct < 20 && (s.illuminanceKlux ?? 0) >= 50));
  const mean = (xs: typeof stored) => xs.reduce((a, s) => a + s.errorMm, 0) / xs.length;
  expect(inCell.length).toBeGreaterThanOrEqual(15);
  expect(mean(inCell) - mean(rest)).toBeGreaterThan(5);
  expect(rest.every((s) => s.within)).toBe(true);
  expect(inCell.filter((s) => !s.within).length).toBeGreaterThan(inCell.length / 3);
});

test("the depth camera has a phase-wrap shot on the target beyond its combined interval and too few shots for a verdict", async () => {
  const r = await sensorReportFor(DEMO_IDS.camera);
  const wraps = r.shots.filter((s) => s.flags.includes("wrap"));
  expect(wraps).toHaveLength(1);
  expect(scenario.meta[wraps[0]!.id]!.beyondInterval).toBe(true);
  // 20 and 25 MHz: combined interval c₀/(2 · 5 MHz · n) ≈ 29.97 m, so a ~32 m target reads ~2 m
  expect(wraps[0]!.referenceM).toBeGreaterThan(30);
  expect(wraps[0]!.rangeM).toBeLessThan(3);
  expect(r.verdict).toBe("insufficient");
  expect(r.shots.filter((s) => !s.flags.includes("wrap")).every((s) => s.within)).toBe(true);
});

test("each client's viewer lands on their own project only, judged on its own shots (issue 14)", async () => {
  const { projectsHome } = await import("~/models/home.server");
  const viewer = (email: string) => {
    const u = summary.users.find((x) => x.email === email)!;
    return { id: u.id, role: u.role };
  };
  const quarrySessions = new Set(scenario.sessions.filter((s) => s.projectId === DEMO_IDS.quarry).map((s) => s.id));
  const quarryShots = scenario.shots.filter((s) => quarrySessions.has(s.sessionId)).length;

  const maren = await projectsHome(viewer("maren.holt@kestrel-aggregates.example"));
  expect(maren.map((p) => p.id)).toEqual([DEMO_IDS.quarry]);
  expect(maren[0]!.sensors.map((s) => [s.id, s.n])).toEqual([[DEMO_IDS.tripod, quarryShots]]);

  const wendel = await projectsHome(viewer("client.viewer@fernhollow.example"));
  expect(wendel.map((p) => p.id)).toEqual([DEMO_IDS.project]);
  expect(wendel[0]!.sensors.map((s) => s.id).sort()).toEqual([DEMO_IDS.camera, DEMO_IDS.roof, DEMO_IDS.tripod].sort());
  // The shared tripod: the river project's n plus the quarry's n is the sensor's whole history.
  const allTripod = scenario.shots.filter((s) => scenario.sessions.find((x) => x.id === s.sessionId)!.sensorKey === "tripod").length;
  expect(wendel[0]!.sensors.find((s) => s.id === DEMO_IDS.tripod)!.n).toBe(allTripod - quarryShots);
});
