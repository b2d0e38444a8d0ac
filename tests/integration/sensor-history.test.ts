// The sensor history (issue 15) marks drift and past-due certificates: seven monthly sessions
// whose bias climbs steadily (a run of seven moving up: Nelson's test 3; a least-squares slope
// whose t test is significant), the last three held after the certificate fell due. Expected
// figures worked out here from the synced offsets; the t quantile from jStat (outside library).
import { beforeAll, expect, test } from "vitest";
import jStat from "jstat";
import { sensorHistory } from "~/models/history.server";
import { makeUser, shareProject, type TestUser } from "../support/registry-fixtures";
import { HISTORY_BIASES, HISTORY_DATES, historyWorld } from "../support/history-world";

const J = jStat as { studentt: { inv(p: number, df: number): number } };
let qa: TestUser;
let sensorId: string;
// session bias (mm): each session's three shots have errors bias − 0.4, bias, bias + 0.4
const biases = HISTORY_BIASES;
const dates = HISTORY_DATES;

beforeAll(async () => {
  qa = await makeUser("qa");
  const world = await historyWorld({
    sensor: { label: "Drifting rangefinder", certNumber: "FG-CAL-0777", certLaboratory: "Fernhollow calibration bench" },
    siteName: "Fernhollow quarry baseline",
    deviceId: "tablet-h",
    share: (crew, sensor, site) => shareProject([sensor], [site], [crew, qa]), // api.md v1.1: the crew syncs into, and QA reads, their project
  });
  sensorId = world.sensor.id;
  const r = world.sync;
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
