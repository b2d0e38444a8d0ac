// The sensor history (issue 15) marks drift and past-due certificates: seven monthly sessions
// whose bias climbs steadily (a run of seven moving up: Nelson's test 3; a least-squares slope
// whose t test is significant), the last three held after the certificate fell due. Expected
// figures worked out here from the synced offsets; the t quantile from jStat (outside library).
import { beforeAll, expect, test } from "vitest";
import jStat from "jstat";
import { action as syncAction } from "~/routes/api.sync";
import { sensorHistory } from "~/models/history.server";
import { apiRequest, call, makeSensor, makeSite, makeUser, shareProject, type TestUser } from "../support/registry-fixtures";

const J = jStat as { studentt: { inv(p: number, df: number): number } };
let qa: TestUser;
let sensorId: string;
// session bias (mm): each session's three shots have errors bias − 0.4, bias, bias + 0.4
const biases = [0.2, 0.5, 0.9, 1.2, 1.6, 2.1, 2.3];
const dates = ["2026-03-02", "2026-04-01", "2026-05-04", "2026-06-01", "2026-07-01", "2026-08-03", "2026-09-01"];

beforeAll(async () => {
  const crew = await makeUser("crew");
  qa = await makeUser("qa");
  const sensor = await makeSensor({
    label: "Drifting rangefinder",
    toleranceMm: 5,
    tolerancePpm: 10,
    certNumber: "FG-CAL-0777",
    certLaboratory: "Fernhollow calibration bench",
    certIssued: "2025-07-01",
    certDue: "2026-07-01",
  });
  sensorId = sensor.id;
  const site = await makeSite({ name: "Fernhollow quarry baseline" });
  await shareProject([sensor], [site], [crew, qa]); // api.md v1.1: the crew syncs into, and QA reads, their project
  const sessions = dates.map((d) => ({ id: crypto.randomUUID(), sensorId, siteId: site.id, startedAt: `${d}T08:00:00+02:00`, airTempC: 15, pressureHpa: 1010, humidityPct: 60 }));
  const shots = sessions.flatMap((s, i) =>
    [-0.4, 0, 0.4].map((d, k) => ({
      id: crypto.randomUUID(),
      sessionId: s.id,
      takenAt: `${dates[i]}T09:0${k}:00+02:00`,
      reference: { method: "edm", distanceM: 40 + 10 * k },
      readings: { rangesM: [40 + 10 * k + (biases[i] + d) / 1000] },
      reflectancePct: 50,
      illuminanceKlux: 20,
    })),
  );
  const r = await call(syncAction, apiRequest("/api/sync", { user: crew, json: { deviceId: "tablet-h", sessions, shots } }));
  expect(r.status).toBe(200);
  expect(new Set(r.json.results.map((x: { status: string }) => x.status))).toEqual(new Set(["accepted"]));
});

test("drift: the run of sessions moving up and the significant trend are marked; past-due sessions flagged", async () => {
  const h = (await sensorHistory({ id: qa.id, role: "qa" }, sensorId, 24))!;
  expect(h.sessions.map((s) => s.startedAt.slice(0, 10))).toEqual(dates);
  h.sessions.forEach((s, i) => expect(s.biasMm!).toBeCloseTo(biases[i], 2));
  // Nelson's test 3: seven sessions steadily increasing (≥ 6) → all seven in the run
  expect(h.drift.runIndices).toEqual([0, 1, 2, 3, 4, 5, 6]);
  expect(h.drift.runDirection).toBe("up");
  // least squares by hand on (years since the first session, bias)
  const x = dates.map((d) => (Date.parse(`${d}T06:00:00Z`) - Date.parse(`${dates[0]}T06:00:00Z`)) / (365.25 * 86_400_000));
  const mx = x.reduce((a, b) => a + b) / 7;
  const my = biases.reduce((a, b) => a + b) / 7;
  const sxx = x.reduce((a, v) => a + (v - mx) ** 2, 0);
  const b = x.reduce((a, v, i) => a + (v - mx) * (biases[i] - my), 0) / sxx;
  const sse = x.reduce((a, v, i) => a + (biases[i] - (my + b * (v - mx))) ** 2, 0);
  const se = Math.sqrt(sse / 5 / sxx);
  expect(h.drift.slopeMmPerYear!).toBeCloseTo(b, 1);
  expect(h.drift.df).toBe(5);
  expect(Math.abs(h.drift.t!)).toBeGreaterThan(J.studentt.inv(0.975, 5));
  expect(h.drift.t!).toBeCloseTo(b / se, 0);
  expect(h.drift.trendSignificant).toBe(true);
  // certificate due 2026-07-01: sessions after that date are past due (ranging.md §7: the session's date after due)
  expect(h.sessions.map((s) => s.certificatePastDue)).toEqual([false, false, false, false, false, true, true]);
});
