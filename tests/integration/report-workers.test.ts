// Issue 16: the production server reads a report's sums on a worker thread with its own
// connection (app/models/report-pool.server.ts); tests and dev read them on the request's
// thread. The same database must give the same report bytes either way. The expected figures
// are worked out here from ranging.md §3–4 (e = mean of the readings − D, in mm; the sensor
// applies its own air correction, so the readings are taken as they are; bias = mean of e).
import { afterAll, expect, test } from "vitest";
import { getDb } from "~/db/client.server";
import { closeReportPool, reportPool } from "~/models/report-pool.server";
import { clearReportCache, sensorReportJson } from "~/models/reports.server";
import { action } from "~/routes/api.sync";
import { apiRequest, call, makeSensor, makeSite, makeUser, shareProject } from "../support/registry-fixtures";

const saved = process.env.REPORT_WORKERS;
afterAll(async () => {
  await closeReportPool();
  if (saved === undefined) delete process.env.REPORT_WORKERS;
  else process.env.REPORT_WORKERS = saved;
});

test("a report read on the worker thread has the bytes of the one read on the request's thread", async () => {
  const [crew, sensor, site] = await Promise.all([makeUser("crew"), makeSensor({ appliesAirCorrection: true }), makeSite({ targets: [{ label: "dark", reflectancePct: 10 }] })]);
  await shareProject([sensor], [site], [crew]);
  const session = { id: crypto.randomUUID(), sensorId: sensor.id, siteId: site.id, startedAt: "2026-05-04T08:10:00+02:00", airTempC: 18.5, pressureHpa: 1004.2, humidityPct: 62 };
  const shot = (d: number, ranges: number[]) => ({
    id: crypto.randomUUID(),
    sessionId: session.id,
    takenAt: "2026-05-04T08:20:00+02:00",
    targetId: site.targets[0]!.id,
    reference: { method: "edm", distanceM: d },
    readings: { rangesM: ranges },
    reflectancePct: 10,
    illuminanceKlux: 40,
  });
  // e = (20.003 + 20.005)/2 − 20 = 4.0 mm; 12.002 − 12 = 2.0 mm; 45.0005 − 45 = 0.5 mm
  const res = await call(
    action,
    apiRequest("/api/sync", { user: crew, json: { deviceId: "tablet-r", sessions: [session], shots: [shot(20, [20.003, 20.005]), shot(12, [12.002]), shot(45, [45.0005])] } }),
  );
  expect(res.status).toBe(200);

  const actor = { id: crew.id, role: crew.role };
  delete process.env.REPORT_WORKERS;
  await closeReportPool();
  expect(reportPool()).toBeNull(); // NODE_ENV=test: the request's thread
  const here = await sensorReportJson(actor, sensor.id, {});
  if (here.status !== 200) throw new Error(JSON.stringify(here.body));

  clearReportCache(getDb());
  process.env.REPORT_WORKERS = "1";
  await closeReportPool();
  expect(reportPool()).not.toBeNull();
  const there = await sensorReportJson(actor, sensor.id, {});
  if (there.status !== 200) throw new Error(JSON.stringify(there.body));
  if (!("json" in here) || !("json" in there)) throw new Error("a report without rows is bytes, not a stream");

  const text = new TextDecoder().decode(there.json);
  expect(text).toBe(new TextDecoder().decode(here.json));
  const body = JSON.parse(text) as { n: number; biasMm: number; maxAbsMm: number };
  expect(body.n).toBe(3);
  expect(body.biasMm).toBeCloseTo((4.0 + 2.0 + 0.5) / 3, 2);
  expect(body.maxAbsMm).toBeCloseTo(4.0, 2);
});
