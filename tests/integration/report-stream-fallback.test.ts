// When a sync lands between a report's figures and the snapshot its streamed rows are read from
// (the shots' stamp differs), include=shots and the CSV are built from the shots in memory
// instead, so rows and figures describe the same shots (decision 0013). The stamp is made to
// differ here by a stand-in for shotsStampIn.
import { beforeAll, expect, test, vi } from "vitest";
import { action as syncAction } from "~/routes/api.sync";
import { loader as reportLoader } from "~/routes/api.sensors.$sensorId.report";
import { loader as csvLoader } from "~/routes/api.sensors.$sensorId.report[.]csv";
import { apiRequest, call, makeSensor, makeSite, makeUser, shareProject, type TestUser } from "../support/registry-fixtures";

const stampReads = vi.hoisted(() => ({ n: 0 }));
vi.mock(import("~/models/report-state.server"), async (original) => ({
  ...(await original()),
  shotsStampIn: async () => {
    stampReads.n++;
    return "a sync landed meanwhile";
  },
}));

let viewer: TestUser;
let sensorId: string;
const errorsMm = [1, -2, 3, -4, 5, 2];

beforeAll(async () => {
  const crew = await makeUser("crew");
  viewer = await makeUser("viewer");
  sensorId = (await makeSensor({ label: "Fallback scanner" })).id;
  const site = await makeSite({ targets: [{ label: "T1 mid board", reflectancePct: 50 }] });
  await shareProject([{ id: sensorId }], [site], [crew, viewer]);
  const sessionId = crypto.randomUUID();
  const shots = errorsMm.map((e, i) => ({
    id: crypto.randomUUID(),
    sessionId,
    takenAt: `2026-05-08T10:0${i}:00+02:00`,
    targetId: site.targets[0]!.id,
    reference: { method: "edm", distanceM: 30 },
    readings: { rangesM: [30 + e / 1000] },
    reflectancePct: 50,
    illuminanceKlux: 20,
  }));
  const a = await call(
    syncAction,
    apiRequest("/api/sync", { user: crew, json: { deviceId: "t", sessions: [{ id: sessionId, sensorId, siteId: site.id, startedAt: "2026-05-08T09:55:00+02:00" }], shots } }),
  );
  expect(a.json.results.every((r: { status: string }) => r.status === "accepted")).toBe(true);
});

test("include=shots: the whole answer from the shots in memory, every row and the same figures", async () => {
  const figures = await call(reportLoader, apiRequest(`/api/sensors/${sensorId}/report`, { user: viewer }), { sensorId });
  const before = stampReads.n;
  const r = await call(reportLoader, apiRequest(`/api/sensors/${sensorId}/report?include=shots`, { user: viewer }), { sensorId });
  expect(stampReads.n).toBe(before + 1); // the stream was tried and refused
  expect(r.status).toBe(200);
  expect(r.headers.get("Content-Length")).not.toBeNull(); // bytes, not a stream
  const { shots, ...rest } = r.json;
  expect(shots.map((s: { errorMm: number }) => s.errorMm)).toEqual(errorsMm.map((e) => expect.closeTo(e, 6)));
  expect(rest.n).toBe(figures.json.n);
  expect(rest.biasMm).toBeCloseTo(figures.json.biasMm, 9);
});

test("CSV: every shot row, from the shots in memory", async () => {
  const r = await call(csvLoader, apiRequest(`/api/sensors/${sensorId}/report.csv`, { user: viewer }), { sensorId });
  expect(r.status).toBe(200);
  const lines = r.text.trim().split("\r\n");
  expect(lines).toHaveLength(2 + errorsMm.length);
  expect(lines.slice(2).every((l) => l.includes("T1 mid board"))).toBe(true);
});
