// issue 15: shots stored before migration 0002 came out of it with no reference uncertainty
// (unknown until a recompute). The migration path fills it in once, from each shot's raw
// record, and marks that it did; a second run changes nothing. Expected u_ref worked out here by
// hand from ranging.md §7 (tape certificate: uncertaintyMm + uncertaintyPpm · L / 1000).
import { beforeAll, expect, test } from "vitest";
import { eq, inArray, sql } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { auditLog, shots } from "~/db/schema";
import { migrateDb } from "~/db/migrate.server";
import { BACKFILL_REFERENCE_UNCERTAINTY_ACTION, backfillReferenceUncertainty } from "~/models/recompute.server";
import { action as syncAction } from "~/routes/api.sync";
import { apiRequest, call, makeSensor, makeSite, makeTape, makeUser, shareProject } from "../support/registry-fixtures";

const ids = [crypto.randomUUID(), crypto.randomUUID(), crypto.randomUUID()];

beforeAll(async () => {
  const crew = await makeUser("crew");
  const sensor = await makeSensor({ label: "Backfill rangefinder" });
  const tape = await makeTape({ uncertaintyMm: 0.5, uncertaintyPpm: 20 });
  const site = await makeSite({ name: "Fernhollow depot" });
  await shareProject([sensor], [site], [crew], { tapeIds: [tape.id] }); // api.md v1.1 (issue 14: with its tape): sessions belong to a project of the crew's
  const sessionId = crypto.randomUUID();
  const tapeUse = { tapeId: tape.id, tempC: 20, tensionN: 50, support: "ground", spans: 1 };
  const refs = [
    { method: "tape", distanceM: 25, tape: tapeUse }, // 0.5 + 20 × 25 / 1000 = 1.0 mm
    { method: "tape", distanceM: 40, tape: tapeUse, uncertaintyMm: 0.3 }, // the shot's own: 0.3 mm
    { method: "edm", distanceM: 60 }, // no EDM, no project rule: unknown (null)
  ];
  const r = await call(
    syncAction,
    apiRequest("/api/sync", {
      user: crew,
      json: {
        deviceId: "tablet-b",
        sessions: [{ id: sessionId, sensorId: sensor.id, siteId: site.id, startedAt: "2026-04-02T08:00:00+02:00", airTempC: 15, pressureHpa: 1010, humidityPct: 60 }],
        shots: refs.map((reference, i) => ({
          id: ids[i],
          sessionId,
          takenAt: `2026-04-02T09:0${i}:00+02:00`,
          reference,
          readings: { rangesM: [reference.distanceM + 0.001] },
          reflectancePct: 50,
          illuminanceKlux: 20,
        })),
      },
    }),
  );
  expect(r.json.results.map((x: { status: string }) => x.status)).toEqual(["accepted", "accepted", "accepted", "accepted"]);
});

const stored = async () => {
  const rows = await getDb().select({ id: shots.id, u: shots.referenceUncertaintyMm }).from(shots).where(inArray(shots.id, ids));
  return ids.map((id) => rows.find((r) => r.id === id)!.u);
};

test("shots stored before migration 0002 get their reference uncertainty once, through the migration path", async () => {
  const db = getDb();
  const before = await stored();
  expect(before[0]).toBeCloseTo(1.0, 9);
  expect(before[1]).toBeCloseTo(0.3, 9);
  expect(before[2]).toBeNull();
  // as they were after migration 0002 added the column: empty
  await db.update(shots).set({ referenceUncertaintyMm: null }).where(inArray(shots.id, ids));
  expect(await stored()).toEqual([null, null, null]);

  await migrateDb(db); // nothing left to migrate; the backfill runs
  const after = await stored();
  expect(after[0]).toBeCloseTo(1.0, 9);
  expect(after[1]).toBeCloseTo(0.3, 9);
  expect(after[2]).toBeNull(); // unknown stays unknown, never 0
  const marks = await db.select().from(auditLog).where(eq(auditLog.action, BACKFILL_REFERENCE_UNCERTAINTY_ACTION));
  expect(marks).toHaveLength(1);
  expect((marks[0].detail as { shots: number }).shots).toBeGreaterThanOrEqual(3);

  // once: a later start does not recompute again (a shot emptied now stays as it is)
  await db.update(shots).set({ referenceUncertaintyMm: null }).where(eq(shots.id, ids[0]));
  expect(await backfillReferenceUncertainty(db)).toEqual({ ran: false, updated: 0 });
  await migrateDb(db);
  expect((await stored())[0]).toBeNull();
  expect(
    await db
      .select({ n: sql<number>`count(*)` })
      .from(auditLog)
      .where(eq(auditLog.action, BACKFILL_REFERENCE_UNCERTAINTY_ACTION)),
  ).toEqual([{ n: 1 }]);
});
