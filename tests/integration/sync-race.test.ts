// Idempotency held by the database, not by one process (issue 17): a record another app
// instance stores between this request's read and its write is skipped by the insert
// (ON CONFLICT DO NOTHING) and answered from the stored raw; transient database errors are
// retried inside the request, then answered 503 with Retry-After — never a 500.
import { afterAll, expect, test, vi } from "vitest";
import { getDb, openDb, type Db } from "~/db/client.server";
import { checkSessions, shots } from "~/db/schema";
import { isTransientDbError } from "~/db/transient.server";
import { ingestSync } from "~/models/sync.server";
import { action } from "~/routes/api.sync";
import { apiRequest, call, makeSensor, makeSite, makeUser, shareProject } from "../support/registry-fixtures";

const uid = () => crypto.randomUUID();
const opened: Db[] = [];
afterAll(() => opened.forEach((d) => d.$client.close()));

async function world() {
  const [crew, sensor, site] = await Promise.all([makeUser("crew"), makeSensor(), makeSite({ targets: [{ label: "grey", reflectancePct: 18 }] })]);
  await shareProject([sensor], [site], [crew]); // issue 14
  const s = { id: uid(), sensorId: sensor.id, siteId: site.id, startedAt: "2026-05-04T08:10:00+02:00", airTempC: 18.5, pressureHpa: 1004.2, humidityPct: 62 };
  const shot = (d: number) => ({
    id: uid(),
    sessionId: s.id,
    takenAt: "2026-05-04T08:20:00+02:00",
    targetId: site.targets[0]!.id,
    reference: { method: "edm", distanceM: d },
    readings: { rangesM: [d + 0.003] },
    reflectancePct: 18,
    illuminanceKlux: 40,
  });
  return { crew, s, shot };
}

async function stored(table: typeof checkSessions | typeof shots, ids: string[]) {
  const all = await getDb().select({ id: table.id, raw: table.raw }).from(table);
  return all.filter((r) => ids.includes(r.id));
}

test("records another instance stores between this request's read and write are answered duplicate or conflict, each stored once", async () => {
  const w = await world();
  const list = Array.from({ length: 6 }, (_, i) => w.shot(5 + i));
  const actor = { id: w.crew.id, role: "crew" as const };
  const here = openDb(process.env.DATABASE_URL!);
  const there = openDb(process.env.DATABASE_URL!);
  opened.push(here, there);
  // the other instance takes the session, shots 0–2 as they are and shot 3 with another reading
  const changed = { ...list[3]!, readings: { rangesM: [8.2] } };
  const theirs = { deviceId: "tablet-b", sessions: [w.s], shots: [...list.slice(0, 3), changed] };
  const batch = here.$client.batch.bind(here.$client);
  let raced = false;
  vi.spyOn(here.$client, "batch").mockImplementation(async (stmts, mode) => {
    if (mode === "write" && !raced) {
      raced = true; // this request has read and classified: now the other one writes first
      const a = await ingestSync(actor, theirs, there);
      expect((a.body as { results: { status: string }[] }).results.map((r) => r.status)).toEqual(Array(5).fill("accepted"));
    }
    return batch(stmts, mode);
  });
  const mine = await ingestSync(actor, { deviceId: "tablet-a", sessions: [w.s], shots: list }, here);
  expect(raced).toBe(true);
  expect(mine.status).toBe(200);
  const results = (mine.body as { results: { kind: string; id: string; status: string; errors?: { path: string }[] }[] }).results;
  expect(results.map((r) => r.status)).toEqual(["duplicate", "duplicate", "duplicate", "duplicate", "rejected", "accepted", "accepted"]);
  expect(results[4]!.errors?.[0]?.path).toBe("id");
  expect(await stored(checkSessions, [w.s.id])).toHaveLength(1);
  const rows = await stored(
    shots,
    list.map((x) => x.id),
  );
  expect(rows).toHaveLength(6);
  // the conflicting copy did not overwrite the one stored first
  expect(JSON.parse(rows.find((r) => r.id === changed.id)!.raw).readings.rangesM).toEqual([8.2]);
  // only the two shots this request wrote count as this request's (the failed-verdict notice)
  expect(mine.sensorIds).toHaveLength(1);
});

const busy = () => Object.assign(new Error("SQLITE_BUSY: database is locked"), { code: "SQLITE_BUSY" });

test("a database busy for a moment is tried again inside the request", async () => {
  const w = await world();
  const client = getDb().$client;
  const batch = client.batch.bind(client);
  let fails = 2;
  const spy = vi.spyOn(client, "batch").mockImplementation(async (stmts, mode) => {
    if (mode === "write" && fails > 0) {
      fails--;
      throw busy();
    }
    return batch(stmts, mode);
  });
  const body = { deviceId: "t", sessions: [w.s], shots: [w.shot(7)] };
  const res = await call(action, apiRequest("/api/sync", { user: w.crew, json: body }));
  spy.mockRestore();
  expect(res.status).toBe(200);
  expect(res.json.results.map((r: { status: string }) => r.status)).toEqual(["accepted", "accepted"]);
  expect(await stored(shots, [body.shots[0]!.id])).toHaveLength(1);
});

test("a database that stays busy (or a replica that cannot reach its primary) answers 503 with Retry-After and writes nothing", async () => {
  const w = await world();
  const client = getDb().$client;
  const batch = client.batch.bind(client);
  const proxy = Object.assign(new Error("error executing a request on the primary: transport error"), { code: "PROXY_ERROR" });
  for (const err of [busy(), proxy]) {
    const spy = vi.spyOn(client, "batch").mockImplementation(async (stmts, mode) => {
      if (mode === "write") throw err;
      return batch(stmts, mode);
    });
    const body = { deviceId: "t", sessions: [w.s], shots: [w.shot(9)] };
    const res = await call(action, apiRequest("/api/sync", { user: w.crew, json: body }));
    spy.mockRestore();
    expect(res.status).toBe(503);
    expect(Number(res.headers.get("Retry-After"))).toBeGreaterThan(0);
    expect(res.json.error).toMatch(/nothing was written/);
    expect(await stored(shots, [body.shots[0]!.id])).toHaveLength(0);
  }
});

test("a refused write forwarded by a replica is not mistaken for a transient one", () => {
  // the message sqld 0.24.32 gives when a replica forwards a write the primary refuses
  const unique = Object.assign(new Error("error executing a request on the primary: UNIQUE constraint failed: shots.id"), { code: "PROXY_ERROR" });
  expect(isTransientDbError(unique)).toBe(false);
  expect(isTransientDbError(Object.assign(new Error("PROXY_ERROR: connection refused"), { code: "PROXY_ERROR" }))).toBe(true);
  expect(isTransientDbError(new TypeError("fetch failed", { cause: Object.assign(new Error("read ECONNRESET"), { code: "ECONNRESET" }) }))).toBe(true);
  expect(isTransientDbError(new Error("no such table: shots"))).toBe(false);
});
