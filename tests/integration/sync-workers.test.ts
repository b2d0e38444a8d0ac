// Issue 16: the production server runs sync's CPU stages on worker threads (tinypool,
// app/models/sync.worker.ts); tests and dev run the same stages on the request's thread in
// slices. The same batch must get the same answer and the same stored rows either way. The
// expected figure is worked out here from ranging.md §3 (e = mean of the readings − D, in mm;
// the sensor applies its own air correction, so the readings are taken as they are, ranging.md §2).
import { afterAll, expect, test } from "vitest";
import { verdictNoticesSettled } from "~/models/verdict-notice.server";
import { inArray } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { shots } from "~/db/schema";
import { gunzipSync } from "node:zlib";
import { closeSyncPool, syncPool, syncWorkerCount } from "~/models/sync-pool.server";
import { acceptsGzip } from "~/models/sync-answer.server";
import { action } from "~/routes/api.sync";
import { apiRequest, call, makeSensor, makeSite, makeTape, makeUser, shareProject, type TestUser } from "../support/registry-fixtures";

const uid = () => crypto.randomUUID();
const sync = (user: TestUser, body: unknown) => call(action, apiRequest("/api/sync", { user, json: body }));
const saved = process.env.SYNC_WORKERS;

afterAll(async () => {
  await verdictNoticesSettled(); // its verdict check writes through the pool
  await closeSyncPool();
  if (saved === undefined) delete process.env.SYNC_WORKERS;
  else process.env.SYNC_WORKERS = saved;
});

async function world() {
  const [crew, sensor, site, tape] = await Promise.all([makeUser("crew"), makeSensor({ appliesAirCorrection: true }), makeSite({ targets: [{ label: "dark", reflectancePct: 10 }] }), makeTape()]);
  await shareProject([sensor], [site], [crew], { tapeIds: [tape.id] }); // api.md v1.1 (issue 14: with its tape): sessions belong to one of the crew's projects
  return { crew, sensor, site, tape };
}

/** A batch with every kind of answer: accepted, rejected by zod, by the registry, by its session, duplicate, conflict. */
function batch(w: Awaited<ReturnType<typeof world>>) {
  const good = { id: uid(), sensorId: w.sensor.id, siteId: w.site.id, startedAt: "2026-05-04T08:10:00+02:00", airTempC: 18.5, pressureHpa: 1004.2, humidityPct: 62 };
  const unknownSensor = { ...good, id: uid(), sensorId: "no-such-sensor" };
  const shot = (sessionId: string, d: number, ranges: number[], over: Record<string, unknown> = {}) => ({
    id: uid(),
    sessionId,
    takenAt: "2026-05-04T08:20:00+02:00",
    targetId: w.site.targets[0]!.id,
    reference: { method: "edm", distanceM: d },
    readings: { rangesM: ranges },
    reflectancePct: 10,
    illuminanceKlux: 40,
    ...over,
  });
  const a = shot(good.id, 20, [20.003, 20.005]);
  const taped = shot(good.id, 12, [12.002], { reference: { method: "tape", distanceM: 12, tape: { tapeId: w.tape.id, tempC: 20, tensionN: 50, support: "ground" } } });
  const badZod = shot(good.id, 20, [-1]);
  const orphan = shot(unknownSensor.id, 20, [20.001]);
  const noTape = shot(good.id, 12, [12.002], { reference: { method: "tape", distanceM: 12, tape: { tapeId: "no-such-tape", tempC: 20, tensionN: 50, support: "ground" } } });
  const again = { ...a };
  const changed = { ...a, readings: { rangesM: [20.1] } };
  return { deviceId: "tablet-w", sessions: [good, unknownSensor], shots: [a, taped, badZod, orphan, noTape, again, changed] };
}

/** The answer with ids replaced by their place in the batch, so two batches compare. */
function shape(body: ReturnType<typeof batch>, results: { id: string; kind: string; status: string; errors?: { path: string; message: string }[] }[]) {
  const ids = [...body.sessions.map((s) => s.id), ...body.shots.map((s) => s.id), "no-such-sensor"];
  const anon = (t: string) => ids.reduce((acc, id, i) => acc.split(id).join(`#${i}`), t);
  return results.map((r) => ({ ...r, id: anon(r.id), errors: r.errors?.map((e) => ({ path: e.path, message: anon(e.message) })) }));
}

async function storedFigures(ids: string[]) {
  const got = await getDb().select({ id: shots.id, errorMm: shots.errorMm, referenceM: shots.referenceM, raw: shots.raw }).from(shots).where(inArray(shots.id, ids));
  return ids.flatMap((id) => got.filter((g) => g.id === id).map((g) => ({ errorMm: g.errorMm, referenceM: g.referenceM, raw: JSON.parse(g.raw) })));
}

test("a batch synced through the worker threads gets the answer and the stored rows it gets on the request's thread", async () => {
  const w = await world();

  process.env.SYNC_WORKERS = "0";
  await verdictNoticesSettled(); // its verdict check writes through the pool
  await closeSyncPool();
  expect(syncPool()).toBeNull();
  const inThread = batch(w);
  const a = await sync(w.crew, inThread);

  process.env.SYNC_WORKERS = "1";
  await verdictNoticesSettled(); // its verdict check writes through the pool
  await closeSyncPool();
  expect(syncPool()).not.toBeNull();
  const onWorker = batch(w);
  const b = await sync(w.crew, onWorker);

  expect(a.status).toBe(200);
  expect(b.status).toBe(200);
  const shapeA = shape(inThread, a.json.results);
  expect(shapeA.map((r) => r.status)).toEqual(["accepted", "rejected", "accepted", "accepted", "rejected", "rejected", "rejected", "duplicate", "rejected"]);
  expect(shape(onWorker, b.json.results)).toEqual(shapeA);

  // the stored computed columns match, and the EDM shot's error is the mean reading − D
  const figA = await storedFigures([...new Set(inThread.shots.map((s) => s.id))]);
  const figB = await storedFigures([...new Set(onWorker.shots.map((s) => s.id))]);
  expect(figA).toHaveLength(2);
  expect(figA[0]!.errorMm).toBeCloseTo(((20.003 + 20.005) / 2 - 20) * 1000, 9);
  expect(figB.map((f) => ({ ...f, raw: { ...f.raw, id: "", sessionId: "" } }))).toEqual(figA.map((f) => ({ ...f, raw: { ...f.raw, id: "", sessionId: "" } })));

  // a malformed envelope is refused by the worker exactly as on the request's thread
  const bad = await sync(w.crew, { deviceId: "tablet-w", sessions: {}, shots: [] });
  expect(bad.status).toBe(400);
  expect(bad.json.errors.map((e: { path: string }) => e.path)).toEqual(["sessions"]);
  // the body is parsed on the worker: text that is not JSON is refused there, nothing written
  const notJson = await call(action, apiRequest("/api/sync", { user: w.crew, body: '{"deviceId": "tablet-w", "sessions": [', headers: { "Content-Type": "application/json" } }));
  expect(notJson.status).toBe(400);
  expect(notJson.json.error).toMatch(/not JSON/);

  // a client that takes gzip gets the worker's answer gzipped there (the server's compression
  // middleware leaves an encoded answer alone), and it unpacks to the same answer
  const zippedBatch = batch(w);
  const res = (await action({ request: apiRequest("/api/sync", { user: w.crew, json: zippedBatch, headers: { "Accept-Encoding": "gzip, deflate" } }), params: {}, context: {} } as never)) as Response;
  expect(res.status).toBe(200);
  expect(res.headers.get("Content-Encoding")).toBe("gzip");
  expect(res.headers.get("Content-Type")).toBe("application/json");
  const unpacked = JSON.parse(gunzipSync(Buffer.from(await res.arrayBuffer())).toString("utf8"));
  expect(shape(zippedBatch, unpacked.results)).toEqual(shapeA);
});

test("Accept-Encoding is read as RFC 9110 §12.5.3 words it: q=0 refuses a coding, * stands for any not named", () => {
  expect(acceptsGzip("gzip, deflate")).toBe(true);
  expect(acceptsGzip("br;q=1.0, gzip;q=0.8")).toBe(true);
  expect(acceptsGzip("gzip;q=0")).toBe(false);
  expect(acceptsGzip("gzip;q=0, *")).toBe(false);
  expect(acceptsGzip("*;q=0.5")).toBe(true);
  expect(acceptsGzip("identity")).toBe(false);
  expect(acceptsGzip(null)).toBe(false);
});

test("SYNC_WORKERS is checked: a count that is not a whole number stops the server with the reason", () => {
  expect(syncWorkerCount({ SYNC_WORKERS: "2" })).toBe(2);
  expect(syncWorkerCount({ SYNC_WORKERS: "", NODE_ENV: "test" })).toBe(0);
  expect(syncWorkerCount({ NODE_ENV: "production" })).toBeGreaterThanOrEqual(1);
  expect(() => syncWorkerCount({ SYNC_WORKERS: "two" })).toThrow(/whole number/);
});
