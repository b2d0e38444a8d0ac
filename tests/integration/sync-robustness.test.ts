// Issue 11 (hardening): a reading the physics forbids (ranging.md §9) is one record's rejection,
// never the batch's 500 — through POST /api/sync and through the CSV import chunk. The bounds
// come from ranging.md §9: ranges and reference distances in (0, 10 000] m, round-trip times in
// (0, 70 000] ns, a CW shot's frequencies among the sensor's registered ones.
import { expect, test, vi } from "vitest";
import { inArray } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { checkSessions, sensors, shots } from "~/db/schema";
import { eq } from "drizzle-orm";
import { action } from "~/routes/api.sync";
import * as chunkRoute from "~/routes/review.import.chunk";
import { computeShotRecord, shotInsertRow } from "~/models/shot-record";
import type { ImportMapping } from "~/components/review/import-rows";
import { apiRequest, call, makeSensor, makeSite, makeUser, type TestUser, shareProject } from "../support/registry-fixtures";
import { airState, C0 } from "~/domain";

// computeShotRecord stays real unless a test makes it throw for one shot
vi.mock("~/models/shot-record", async (original) => {
  const mod = await original<typeof import("~/models/shot-record")>();
  return { ...mod, computeShotRecord: vi.fn(mod.computeShotRecord), shotInsertRow: vi.fn(mod.shotInsertRow) };
});

const uid = () => crypto.randomUUID();
const sync = (user: TestUser, body: unknown) => call(action, apiRequest("/api/sync", { user, json: body }));

type Result = { kind: string; id: string; status: string; errors?: { path: string; message: string }[] };

/** Noiseless 4-bucket samples of a target at d metres, vacuum (ranging.md §1 model). */
function samplesFor(d: number, f: number): number[] {
  const phi = ((4 * Math.PI * f * d) / C0) % (2 * Math.PI);
  return [0, 1, 2, 3].map((k) => 900 + 400 * Math.cos(phi - (Math.PI / 2) * k));
}

async function world() {
  const [crew, sensor, site] = await Promise.all([
    makeUser("crew"),
    // a CW sensor with registered 20 and 25 MHz that also gives plain ranges and timings
    makeSensor({ label: "Depth camera DC-3", kind: "cw", wavelengthNm: 850, modulationHz: [20e6, 25e6], appliesAirCorrection: true, toleranceMm: 10, tolerancePpm: 0 }),
    makeSite({ targets: [{ label: "D10", reflectancePct: 10 }] }),
  ]);
  await shareProject([sensor], [site], [crew]); // issue 14
  return { crew, sensor, site };
}

function base(sessionId: string, readings: unknown, distanceM = 17) {
  return { id: uid(), sessionId, takenAt: "2026-05-04T08:20:00+02:00", reference: { method: "edm", distanceM }, readings, reflectancePct: 10, illuminanceKlux: 20 };
}

test("a batch with overflowing readings answers 200 per record and stores the good shots", async () => {
  const w = await world();
  const s = { id: uid(), sensorId: w.sensor.id, siteId: w.site.id, startedAt: "2026-05-04T08:10:00+02:00" };
  const good1 = base(s.id, { rangesM: [17.004] });
  const hugeRange = base(s.id, { rangesM: [1e308] });
  const goodTrip = base(s.id, { roundTripNs: [113.4] });
  const hugeTrip = base(s.id, { roundTripNs: [1e308] });
  const tinyFrequency = base(s.id, { phase: [{ frequencyHz: 1e-300, samples: samplesFor(17, 20e6) }] });
  const good2 = base(s.id, {
    phase: [
      { frequencyHz: 20e6, samples: samplesFor(17, 20e6) },
      { frequencyHz: 25e6, samples: samplesFor(17, 25e6) },
    ],
  });
  const list = [good1, hugeRange, goodTrip, hugeTrip, tinyFrequency, good2];
  const a = await sync(w.crew, { deviceId: "tablet-7", sessions: [s], shots: list });
  expect(a.status).toBe(200);
  const results = a.json.results as Result[];
  expect(results.map((r) => r.id)).toEqual([s.id, ...list.map((x) => x.id)]);
  expect(results.map((r) => r.status)).toEqual(["accepted", "accepted", "rejected", "accepted", "rejected", "rejected", "accepted"]);
  expect(results[2]!.errors!.map((e) => e.path)).toEqual(["readings.rangesM.0"]);
  expect(results[2]!.errors![0]!.message).toMatch(/10000 m/);
  expect(results[4]!.errors!.map((e) => e.path)).toEqual(["readings.roundTripNs.0"]);
  expect(results[4]!.errors![0]!.message).toMatch(/70000 ns/);
  expect(results[5]!.errors!.map((e) => e.path)).toEqual(["readings.phase.0.frequencyHz"]);
  expect(results[5]!.errors![0]!.message).toMatch(/registered/);
  const stored = await getDb()
    .select({ id: shots.id, rangeM: shots.rangeM })
    .from(shots)
    .where(
      inArray(
        shots.id,
        list.map((x) => x.id),
      ),
    );
  expect(stored.map((x) => x.id).sort()).toEqual([good1.id, goodTrip.id, good2.id].sort());
  // the CW shot unwraps to the 17 m target (ranging.md check values: 20 and 25 MHz, 17 m);
  // the samples were made for vacuum, the session's (default) air shortens them by 1/n
  expect(stored.find((x) => x.id === good2.id)!.rangeM).toBeCloseTo(17 / airState({}, 850).n, 6);
});

test("a reference distance beyond 10 km and more than 4 frequencies are rejected at their path", async () => {
  const w = await world();
  const s = { id: uid(), sensorId: w.sensor.id, siteId: w.site.id, startedAt: "2026-05-04T08:10:00+02:00" };
  const farRef = base(s.id, { rangesM: [17.004] }, 12_000);
  const five = base(s.id, { phase: [20e6, 25e6, 20e6, 25e6, 20e6].map((f) => ({ frequencyHz: f, samples: samplesFor(17, f) })) });
  const a = await sync(w.crew, { deviceId: "tablet-7", sessions: [s], shots: [farRef, five] });
  expect(a.status).toBe(200);
  const results = a.json.results as Result[];
  expect(results.map((r) => r.status)).toEqual(["accepted", "rejected", "rejected"]);
  expect(results[1]!.errors!.map((e) => e.path)).toEqual(["reference.distanceM"]);
  expect(results[2]!.errors!.map((e) => e.path)).toEqual(["readings.phase"]);
  expect(results[2]!.errors![0]!.message).toMatch(/at most 4/);
});

test("an unexpected error while computing one shot rejects that shot only, logged on the server", async () => {
  const w = await world();
  const s = { id: uid(), sensorId: w.sensor.id, siteId: w.site.id, startedAt: "2026-05-04T08:10:00+02:00" };
  const good = base(s.id, { rangesM: [17.004] });
  const boom = base(s.id, { rangesM: [17.005] });
  const mocked = vi.mocked(computeShotRecord);
  const real = mocked.getMockImplementation()!;
  const spyErr = vi.spyOn(console, "error").mockImplementation(() => {});
  mocked.mockImplementation((shot, session, ctx) => {
    if (shot.id === boom.id) throw new TypeError("cannot read properties of undefined");
    return real(shot, session, ctx);
  });
  try {
    const a = await sync(w.crew, { deviceId: "tablet-7", sessions: [s], shots: [good, boom] });
    expect(a.status).toBe(200);
    const results = a.json.results as Result[];
    expect(results.map((r) => r.status)).toEqual(["accepted", "accepted", "rejected"]);
    expect(results[2]!.errors![0]!.message).toMatch(/could not be processed/);
    // the server's own wording, not its internals
    expect(results[2]!.errors![0]!.message).not.toMatch(/undefined/);
    expect(spyErr).toHaveBeenCalled();
  } finally {
    mocked.mockImplementation(real);
    spyErr.mockRestore();
  }
  const stored = await getDb()
    .select({ id: shots.id })
    .from(shots)
    .where(inArray(shots.id, [good.id, boom.id]));
  expect(stored.map((x) => x.id)).toEqual([good.id]);
});

test("a row the database refuses is refused alone: the batch is written a record at a time", async () => {
  const w = await world();
  const s = { id: uid(), sensorId: w.sensor.id, siteId: w.site.id, startedAt: "2026-05-04T08:10:00+02:00" };
  const list = [base(s.id, { rangesM: [17.004] }), base(s.id, { rangesM: [17.005] }), base(s.id, { rangesM: [17.006] })];
  const mocked = vi.mocked(shotInsertRow);
  const real = mocked.getMockImplementation()!;
  const spyErr = vi.spyOn(console, "error").mockImplementation(() => {});
  // a value no SQLite column takes: the driver throws inside the write transaction
  mocked.mockImplementation((...args) => {
    const row = real(...args);
    return row.id === list[1]!.id ? { ...row, note: { not: "text" } as unknown as string } : row;
  });
  try {
    const a = await sync(w.crew, { deviceId: "tablet-7", sessions: [s], shots: list });
    expect(a.status).toBe(200);
    const results = a.json.results as Result[];
    expect(results.map((r) => r.status)).toEqual(["accepted", "accepted", "rejected", "accepted"]);
    expect(results[2]!.errors![0]!.message).toMatch(/could not be stored/);
    expect(spyErr).toHaveBeenCalled();
  } finally {
    mocked.mockImplementation(real);
    spyErr.mockRestore();
  }
  const stored = await getDb()
    .select({ id: shots.id })
    .from(shots)
    .where(
      inArray(
        shots.id,
        list.map((x) => x.id),
      ),
    );
  expect(stored.map((x) => x.id).sort()).toEqual([list[0]!.id, list[2]!.id].sort());
});

test("a malformed body still answers 400 and writes nothing", async () => {
  const w = await world();
  const s = { id: uid(), sensorId: w.sensor.id, siteId: w.site.id, startedAt: "2026-05-04T08:10:00+02:00" };
  const a = await sync(w.crew, { deviceId: "tablet-7", sessions: s, shots: [] });
  expect(a.status).toBe(400);
  expect(await getDb().select({ id: checkSessions.id }).from(checkSessions).where(eq(checkSessions.id, s.id))).toHaveLength(0);
});

test("the CSV import chunk rejects an overflowing row with its message and imports the others", async () => {
  const w = await world();
  const sensor = await makeSensor({ label: "Roof scanner R1", kind: "pulsed", appliesAirCorrection: true, toleranceMm: 8, tolerancePpm: 0 });
  await shareProject([sensor], [w.site], [w.crew], { name: "Import workspace" });
  const mapping: ImportMapping = { takenAt: "Timestamp", target: "Board", distanceM: "Ref dist [m]", rangeM: "Range [m]", _timeOffset: "+02:00" };
  const row = (n: number, range: string) => ({
    row: n,
    id: uid(),
    values: { Timestamp: `2026-05-06 09:00:${String(n).padStart(2, "0")}`, Board: "D10", "Ref dist [m]": "20.000", "Range [m]": range },
  });
  const rows = [row(2, "20.003"), row(3, "1e308"), row(4, "20.001"), row(5, "1.5e4"), row(6, "19.998")];
  const r = await call(
    chunkRoute.action as never,
    apiRequest("/review/import/chunk", {
      user: w.crew,
      method: "POST",
      json: { sensorId: sensor.id, siteId: w.site.id, deviceId: "csv-import:test", session: { id: uid(), startedAt: "2026-05-06T09:00:00+02:00" }, mapping, rows },
    }),
  );
  expect(r.status).toBe(200);
  const byRow = Object.fromEntries((r.json.rows as { row: number; status: string; errors: { field: string; message: string }[] }[]).map((x) => [x.row, x]));
  expect([2, 3, 4, 5, 6].map((n) => byRow[n].status)).toEqual(["accepted", "rejected", "accepted", "rejected", "accepted"]);
  expect(byRow[3].errors[0].message).toMatch(/10000 m/);
  expect(byRow[5].errors[0].message).toMatch(/10000 m/);
  const stored = await getDb()
    .select({ id: shots.id })
    .from(shots)
    .where(
      inArray(
        shots.id,
        rows.map((x) => x.id),
      ),
    );
  expect(stored.map((x) => x.id).sort()).toEqual([rows[0]!.id, rows[2]!.id, rows[4]!.id].sort());
});

test("a new session on a retired sensor is refused at sensorId; shots of a session stored before retirement still land", async () => {
  const w = await world();
  const before = { id: uid(), sensorId: w.sensor.id, siteId: w.site.id, startedAt: "2026-05-04T08:10:00+02:00" };
  const first = base(before.id, { rangesM: [17.004] });
  expect((await sync(w.crew, { deviceId: "tablet-7", sessions: [before], shots: [first] })).json.results.map((r: Result) => r.status)).toEqual(["accepted", "accepted"]);
  await getDb().update(sensors).set({ retiredAt: "2026-05-05T12:00:00.000Z" }).where(eq(sensors.id, w.sensor.id));

  const late = base(before.id, { rangesM: [17.006] });
  const after = { id: uid(), sensorId: w.sensor.id, siteId: w.site.id, startedAt: "2026-05-06T08:10:00+02:00" };
  const orphan = base(after.id, { rangesM: [17.002] });
  const a = await sync(w.crew, { deviceId: "tablet-7", sessions: [before, after], shots: [late, orphan] });
  expect(a.status).toBe(200);
  const results = a.json.results as Result[];
  expect(results.map((r) => r.status)).toEqual(["duplicate", "rejected", "accepted", "rejected"]);
  expect(results[1]!.errors!.map((e) => e.path)).toEqual(["sensorId"]);
  expect(results[1]!.errors![0]!.message).toMatch(/retired on 2026-05-05/);
  expect(results[3]!.errors![0]!.path).toBe("sessionId");
  const stored = await getDb()
    .select({ id: shots.id })
    .from(shots)
    .where(inArray(shots.id, [first.id, late.id, orphan.id]));
  expect(stored.map((x) => x.id).sort()).toEqual([first.id, late.id].sort());
  expect(await getDb().select({ id: checkSessions.id }).from(checkSessions).where(eq(checkSessions.id, after.id))).toHaveLength(0);
});
