// issue 16 (v16): the report page's series is kept while the report's fingerprint holds. What is
// served from the kept copy must equal a fresh computation (the cache forgotten) after each
// change that moves the fingerprint: a synced session, an exclusion, its restore; and a reader
// of other projects never gets another reader's kept series.
import { beforeAll, expect, test } from "vitest";
import { getDb } from "~/db/client.server";
import { clearSeriesCache, reportSeries } from "~/models/report-series.server";
import { ingestSync } from "~/models/sync.server";
import { action as exclusionAction } from "~/routes/api.shots.$shotId.exclusion";
import { apiRequest, call, makeUser } from "../support/registry-fixtures";
import { reviewWorld, type ReviewWorld } from "../support/review-fixtures";

let w: ReviewWorld;
beforeAll(async () => {
  w = await reviewWorld();
});

/** The series as served (possibly kept), and as computed afresh. */
async function servedAndFresh(query = "", user = w.users.qa) {
  const served = await reportSeries(user, w.failing.id, new URLSearchParams(query));
  clearSeriesCache(getDb());
  const fresh = await reportSeries(user, w.failing.id, new URLSearchParams(query));
  if (served.status !== 200 || fresh.status !== 200) throw new Error(`series answered ${served.status} / ${fresh.status}`);
  return { served: served.body, fresh: fresh.body };
}

test("a kept series equals a fresh one, and each sync, exclusion and restore is seen at once", async () => {
  const before = await servedAndFresh();
  expect(before.served).toEqual(before.fresh);
  // asked again with nothing changed: the same answer, now from the kept copy
  const again = await reportSeries(w.users.qa, w.failing.id, new URLSearchParams());
  expect(again.status === 200 && again.body).toEqual(before.fresh);

  // a crew syncs a third session of 4 shots, one of them 40 mm long at 20 m (outside its limit)
  const session = { id: crypto.randomUUID(), sensorId: w.failing.id, siteId: w.site.id, startedAt: "2026-05-06T09:00:00+02:00", airTempC: 18, pressureHpa: 1004, humidityPct: 60 };
  const shots = [0.4, -0.6, 40, 1.1].map((e, i) => ({
    id: crypto.randomUUID(),
    sessionId: session.id,
    takenAt: `2026-05-06T09:0${i}:00+02:00`,
    targetId: w.site.targets[1]!.id,
    reference: { method: "edm", distanceM: 20 },
    readings: { rangesM: [20 + e / 1000] },
    reflectancePct: 50,
    illuminanceKlux: 30,
  }));
  const answer = await ingestSync(w.users.crew, { deviceId: "tablet-cache", sessions: [session], shots });
  expect(answer.status).toBe(200);
  const synced = await servedAndFresh();
  expect(synced.served).toEqual(synced.fresh);
  expect(synced.served.errorSeries.total).toBe(before.fresh.errorSeries.total + 4);
  expect(synced.served.explain.included.n).toBe(before.fresh.explain.included.n + 4);

  // QA excludes the long shot: the served series counts it excluded at once
  const long = shots[2]!.id;
  const ex = await call(exclusionAction as never, apiRequest(`/api/shots/${long}/exclusion`, { user: w.users.qa, json: { reason: "Board knocked by a passing vehicle" } }), { shotId: long });
  expect(ex.status).toBe(200);
  const excluded = await servedAndFresh();
  expect(excluded.served).toEqual(excluded.fresh);
  expect(excluded.served.explain.included.n).toBe(synced.fresh.explain.included.n - 1);
  expect(excluded.served.errorSeries.points.find((p) => p.id === long)?.excluded).toBe(true);

  // and restores it
  const back = await call(exclusionAction as never, apiRequest(`/api/shots/${long}/exclusion`, { user: w.users.qa, method: "DELETE", json: { reason: "Checked the photo: the board stood" } }), {
    shotId: long,
  });
  expect(back.status).toBe(200);
  const restored = await servedAndFresh();
  expect(restored.served).toEqual(restored.fresh);
  expect(restored.served.explain.included.n).toBe(synced.fresh.explain.included.n);
});

test("a kept series is per reader's projects and per selection: an outsider still gets 404, a session's series is its own", async () => {
  // the QA member's whole-sensor series is kept now
  expect((await reportSeries(w.users.qa, w.failing.id, new URLSearchParams())).status).toBe(200);
  const outsider = await makeUser("qa");
  expect((await reportSeries(outsider, w.failing.id, new URLSearchParams())).status).toBe(404);
  const sun = w.sessions.find((s) => s.sensorId === w.failing.id && s.startedAt.includes("05-05"))!;
  const one = await servedAndFresh(`session=${sun.id}`);
  expect(one.served).toEqual(one.fresh);
  expect(one.served.errorSeries.total).toBe(15);
  // an admin (every project) and the member read the same shots here: equal series, each computed for its reader
  const admin = await servedAndFresh("", w.users.admin);
  const member = await servedAndFresh("", w.users.qa);
  expect(admin.served).toEqual(member.served);
});

test("the shot table's |error| order reads the index shots_sensor_abs_error, not a sort of every row (SQLite's query plan)", async () => {
  const { asc, eq, sql } = await import("drizzle-orm");
  const { shots } = await import("~/db/schema");
  const db = getDb();
  // the ORDER BY of listShots' absError sort (shots.server.ts sortExpr), as drizzle writes it
  const q = db
    .select({ id: shots.id })
    .from(shots)
    .where(eq(shots.sensorId, w.failing.id))
    .orderBy(sql`abs(${shots.errorMm}) DESC`, asc(shots.id))
    .limit(21)
    .toSQL();
  const plan = await db.$client.execute({ sql: `EXPLAIN QUERY PLAN ${q.sql}`, args: q.params as never });
  const text = plan.rows.map((r) => String(r.detail)).join("\n");
  expect(text).toContain("shots_sensor_abs_error");
  // ties of one |error| value are ordered by id apart, never the whole selection
  expect(text).not.toMatch(/USE TEMP B-TREE FOR ORDER BY/);
});
