// POST /api/sync through the real action against the per-file database: idempotency, per-record
// answers, the server's own computation, guards. Expected figures are worked out here from the
// definitions of ranging.md §3–4 (mean of readings, e = R̄ − D in mm, T = a + b·D/1000, L = k·T;
// tape corrections of Ghilani & Wolf's taping chapter; 3-D grid distance by Pythagoras).
import { expect, test } from "vitest";
import { count, eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { auditLog, checkSessions, sensors, shots } from "~/db/schema";
import { action } from "~/routes/api.sync";
import { recomputeShotsForSensor } from "~/models/recompute.server";
import { ingestSync } from "~/models/sync.server";
import { addMemberUsers, apiRequest, call, makeSensor, makeSite, makeTape, makeUser, shareProject, type TestUser } from "../support/registry-fixtures";

const uid = () => crypto.randomUUID();

async function world(opts: { sensor?: Parameters<typeof makeSensor>[0]; project?: Parameters<typeof shareProject>[3] } = {}) {
  const [crew, sensor, site, tape] = await Promise.all([
    makeUser("crew"),
    makeSensor(opts.sensor),
    makeSite({
      stations: [{ label: "S1", grid: { e: 1000, n: 2000, h: 50 } }],
      targets: [
        { label: "dark", reflectancePct: 10, grid: { e: 1030, n: 2040, h: 51 } },
        { label: "retro", reflectancePct: 90, retro: true },
      ],
    }),
    makeTape(),
  ]);
  // issue 14: the crew's project lists the sensor and the site, so a session implies it
  const project = await shareProject([sensor], [site], [crew], { tapeIds: [tape.id], ...opts.project }); // issue 14: and its tape
  return { crew, sensor, site, tape, project, dark: site.targets[0]!, retro: site.targets[1]! };
}

function session(w: Awaited<ReturnType<typeof world>>, over: Record<string, unknown> = {}) {
  return { id: uid(), sensorId: w.sensor.id, siteId: w.site.id, startedAt: "2026-05-04T08:10:00+02:00", airTempC: 18.5, pressureHpa: 1004.2, humidityPct: 62, ...over };
}

function edmShot(sessionId: string, targetId: string | undefined, distanceM: number, rangesM: number[], over: Record<string, unknown> = {}) {
  return {
    id: uid(),
    sessionId,
    takenAt: "2026-05-04T08:20:00+02:00",
    ...(targetId ? { targetId } : {}),
    reference: { method: "edm", distanceM },
    readings: { rangesM },
    reflectancePct: 10,
    illuminanceKlux: 85,
    ...over,
  };
}

const sync = (user: TestUser, body: unknown) => call(action, apiRequest("/api/sync", { user, json: body }));

async function rows(table: typeof shots | typeof checkSessions, ids: string[]) {
  const all = await getDb().select({ id: table.id }).from(table);
  return all.filter((r) => ids.includes(r.id)).length;
}

test("the same batch sent 10 times is stored once: accepted first, then duplicate every time", async () => {
  const w = await world();
  const s = session(w);
  const shotsIn = Array.from({ length: 5 }, (_, i) => edmShot(s.id, w.dark.id, 10 + i, [10 + i + 0.002]));
  const body = { deviceId: "tablet-7", sessions: [s], shots: shotsIn };
  const answers = [];
  for (let i = 0; i < 10; i++) answers.push(await sync(w.crew, body));
  expect(answers.every((a) => a.status === 200)).toBe(true);
  expect(answers[0]!.json.results.map((r: { status: string }) => r.status)).toEqual(Array(6).fill("accepted"));
  for (const a of answers.slice(1)) expect(a.json.results.map((r: { status: string }) => r.status)).toEqual(Array(6).fill("duplicate"));
  expect(await rows(checkSessions, [s.id])).toBe(1);
  expect(
    await rows(
      shots,
      shotsIn.map((x) => x.id),
    ),
  ).toBe(5);
});

test("a re-sent record with its keys in another order is a duplicate, not a conflict", async () => {
  const w = await world();
  const s = session(w);
  const shot = edmShot(s.id, w.dark.id, 12, [12.001]);
  expect((await sync(w.crew, { deviceId: "t", sessions: [s], shots: [shot] })).json.results.map((r: { status: string }) => r.status)).toEqual(["accepted", "accepted"]);
  const reordered = Object.fromEntries(Object.entries(shot).reverse());
  const again = await sync(w.crew, { deviceId: "t", shots: [{ ...reordered, reference: { distanceM: 12, method: "edm" } }] });
  expect(again.json.results).toEqual([{ kind: "shot", id: shot.id, status: "duplicate" }]);
});

test("one malformed record in 100 is rejected with its field path; the other 99 are stored", async () => {
  const w = await world();
  const s = session(w);
  const list = Array.from({ length: 99 }, (_, i) => edmShot(s.id, w.dark.id, 5 + i * 0.5, [5 + i * 0.5 + 0.001]));
  const bad = edmShot(s.id, w.dark.id, 20, [-3]);
  list.splice(40, 0, bad);
  const a = await sync(w.crew, { deviceId: "t", sessions: [s], shots: list });
  expect(a.status).toBe(200);
  const results = a.json.results as { kind: string; id: string; status: string; errors?: { path: string; message: string }[] }[];
  expect(results).toHaveLength(101);
  expect(results[0]).toEqual({ kind: "session", id: s.id, status: "accepted" });
  expect(results.slice(1).map((r) => r.id)).toEqual(list.map((x) => x.id));
  const rejected = results.filter((r) => r.status === "rejected");
  expect(rejected).toHaveLength(1);
  expect(rejected[0]!.id).toBe(bad.id);
  expect(rejected[0]!.errors!.map((e) => e.path)).toEqual(["readings.rangesM.0"]);
  expect(rejected[0]!.errors![0]!.message).toMatch(/greater than 0/);
  expect(
    await rows(
      shots,
      list.map((x) => x.id),
    ),
  ).toBe(99);
});

test("the same id with other content is rejected as a conflict and the stored row stays as it was", async () => {
  const w = await world();
  const s = session(w);
  const shot = edmShot(s.id, w.dark.id, 25.004, [25.011, 25.009]);
  await sync(w.crew, { deviceId: "t", sessions: [s], shots: [shot] });
  const [before] = await getDb().select().from(shots).where(eq(shots.id, shot.id));
  const changed = { ...shot, readings: { rangesM: [25.5] } };
  const a = await sync(w.crew, { deviceId: "t", sessions: [{ ...s, airTempC: 30 }], shots: [changed] });
  expect(a.json.results.map((r: { status: string }) => r.status)).toEqual(["rejected", "rejected"]);
  expect(a.json.results[1].errors[0]).toMatchObject({ path: "id" });
  expect(a.json.results[1].errors[0].message).toMatch(/never overwritten/);
  const [after] = await getDb().select().from(shots).where(eq(shots.id, shot.id));
  expect(after).toEqual(before);
  const [sess] = await getDb().select({ airTempC: checkSessions.airTempC }).from(checkSessions).where(eq(checkSessions.id, s.id));
  expect(sess!.airTempC).toBe(18.5);
});

test("a malformed body answers 400 and writes nothing", async () => {
  const w = await world();
  const s = session(w);
  const count0 = (await getDb().select({ n: count() }).from(checkSessions))[0]!.n;
  const notJson = await call(action, apiRequest("/api/sync", { user: w.crew, body: "{ deviceId: tablet", headers: { "Content-Type": "application/json" } }));
  expect(notJson.status).toBe(400);
  expect(notJson.json.error).toMatch(/not JSON/);
  for (const body of [[s], { sessions: [s] }, { deviceId: "t", sessions: s }, { deviceId: "t", shots: "none" }, null, 42]) {
    const a = await sync(w.crew, body);
    expect(a.status).toBe(400);
    expect(typeof a.json.error).toBe("string");
  }
  expect((await getDb().select({ n: count() }).from(checkSessions))[0]!.n).toBe(count0);
});

test("501 shots answer 413 and 500 are taken", async () => {
  const w = await world();
  const s = session(w);
  const list = Array.from({ length: 501 }, (_, i) => edmShot(s.id, undefined, 10 + i * 0.01, [10 + i * 0.01]));
  const big = await sync(w.crew, { deviceId: "t", sessions: [s], shots: list });
  expect(big.status).toBe(413);
  expect(await rows(checkSessions, [s.id])).toBe(0);
  const ok = await sync(w.crew, { deviceId: "t", sessions: [s], shots: list.slice(0, 500) });
  expect(ok.status).toBe(200);
  expect(
    await rows(
      shots,
      list.map((x) => x.id),
    ),
  ).toBe(500);
});

test("401 without a sign-in, 403 for a viewer; crew, qa and admin may sync", async () => {
  const w = await world();
  const anon = await call(action, apiRequest("/api/sync", { json: { deviceId: "t" } }));
  expect(anon.status).toBe(401);
  const viewer = await makeUser("viewer");
  const v = await sync(viewer, { deviceId: "t", sessions: [session(w)] });
  expect(v.status).toBe(403);
  // the role check comes before validation: a viewer's malformed body is still 403
  expect((await call(action, apiRequest("/api/sync", { user: viewer, body: "nonsense" }))).status).toBe(403);
  for (const role of ["crew", "qa", "admin"] as const) {
    const u = await makeUser(role);
    await addMemberUsers(w.project.id, [u]);
    const s = session(w);
    const a = await sync(u, { deviceId: `tablet-${role}`, sessions: [s] });
    expect(a.status).toBe(200);
    expect(a.json.results[0].status).toBe("accepted");
  }
});

test("a body cut off mid-stream writes nothing, and the full batch sent again lands every record once", async () => {
  const w = await world();
  const s = session(w);
  const list = Array.from({ length: 300 }, (_, i) => edmShot(s.id, w.dark.id, 3 + i * 0.1, [3 + i * 0.1 + 0.002]));
  const text = JSON.stringify({ deviceId: "t", sessions: [s], shots: list });
  const half = new TextEncoder().encode(text.slice(0, text.length / 2));
  const stream = new ReadableStream<Uint8Array>({
    start(c) {
      c.enqueue(half);
      c.error(new Error("connection reset by the field's one bar of signal"));
    },
  });
  const cut = new Request("http://localhost/api/sync", {
    method: "POST",
    headers: { Authorization: `Bearer ${w.crew.token}`, "Content-Type": "application/json" },
    body: stream,
    duplex: "half",
  } as RequestInit);
  const a = await call(action, cut);
  expect(a.status).toBe(400);
  expect(
    await rows(
      shots,
      list.map((x) => x.id),
    ),
  ).toBe(0);
  // the outbox resends everything, twice (the first answer was lost too)
  const b = await sync(w.crew, { deviceId: "t", sessions: [s], shots: list });
  const c = await sync(w.crew, { deviceId: "t", sessions: [s], shots: list });
  expect(b.json.results.filter((r: { status: string }) => r.status === "accepted")).toHaveLength(301);
  expect(c.json.results.filter((r: { status: string }) => r.status === "duplicate")).toHaveLength(301);
  expect(
    await rows(
      shots,
      list.map((x) => x.id),
    ),
  ).toBe(300);
});

test("two tablets sending the same batch at the same moment store each record once", async () => {
  const w = await world();
  const s = session(w);
  const list = Array.from({ length: 200 }, (_, i) => edmShot(s.id, w.dark.id, 4 + i * 0.1, [4 + i * 0.1]));
  const body = { deviceId: "t", sessions: [s], shots: list };
  const [a, b] = await Promise.all([sync(w.crew, body), sync(w.crew, body)]);
  expect([a.status, b.status]).toEqual([200, 200]);
  const statuses = [a, b].map((x) => [...new Set(x.json.results.map((r: { status: string }) => r.status))].join());
  expect(statuses.sort()).toEqual(["accepted", "duplicate"]);
  expect(
    await rows(
      shots,
      list.map((x) => x.id),
    ),
  ).toBe(200);
});

test("the server computes every figure from the raw readings and ignores the tablet's own", async () => {
  const w = await world();
  const s = session(w);
  const shot = { ...edmShot(s.id, w.dark.id, 25.004, [25.011, 25.009, 25.016]), errorMm: 0, within: true, limitMm: 999, rangeM: 1 };
  const a = await sync(w.crew, { deviceId: "tablet-7", sessions: [s], shots: [shot] });
  expect(a.json.results[1].status).toBe("accepted");
  const [row] = await getDb().select().from(shots).where(eq(shots.id, shot.id));
  // by hand: R̄ = (25.011 + 25.009 + 25.016)/3 = 25.012 m; e = (25.012 − 25.004)·1000 = 8 mm;
  // T = 5 + 10·25.004/1000 = 5.25004 mm; L = 2·T = 10.50008 mm (default rule k = 2); |e| ≤ L.
  const mean = (25.011 + 25.009 + 25.016) / 3;
  expect(row!.rangeM).toBeCloseTo(mean, 12);
  expect(row!.errorMm).toBeCloseTo((mean - 25.004) * 1000, 9);
  expect(row!.errorMm).toBeCloseTo(8, 9);
  expect(row!.toleranceMm).toBeCloseTo(5.25004, 12);
  expect(row!.limitMm).toBeCloseTo(10.50008, 12);
  expect(row!.within).toBe(true);
  const sd = Math.sqrt(((25.011 - mean) ** 2 + (25.009 - mean) ** 2 + (25.016 - mean) ** 2) / 2) * 1000;
  expect(row!.repeatabilityMm).toBeCloseTo(sd, 9);
  expect(row!.readingsCount).toBe(3);
  // stripped: the stored raw holds no derived field
  expect(JSON.parse(row!.raw)).not.toHaveProperty("errorMm");
  expect(JSON.parse(row!.raw)).not.toHaveProperty("within");
  // who, which device, when
  expect(row!.deviceId).toBe("tablet-7");
  expect(row!.syncedBy).toBe(w.crew.id);
  expect(Date.parse(row!.receivedAt)).toBeGreaterThan(Date.now() - 60_000);
  expect(row!.takenAt).toBe("2026-05-04T08:20:00+02:00");
});

test("a taped reference uses the tape's registry constants; coordinates use the surveyed positions", async () => {
  const w = await world();
  const s = session(w);
  const taped = {
    ...edmShot(s.id, w.dark.id, 0, [29.99]),
    reference: { method: "tape", distanceM: 30, tape: { tapeId: w.tape.id, tempC: 31, tensionN: 70, support: "ends", spans: 2 } },
  };
  const surveyed = {
    ...edmShot(s.id, w.dark.id, 0, [50.03]),
    reference: { method: "coordinates", stationId: w.site.stations[0]!.id, instrumentHeightM: 1.5, targetHeightM: 0.3 },
  };
  const a = await sync(w.crew, { deviceId: "t", sessions: [s], shots: [taped, surveyed] });
  expect(a.json.results.map((r: { status: string }) => r.status)).toEqual(["accepted", "accepted", "accepted"]);
  const got = new Map((await getDb().select().from(shots)).map((r) => [r.id, r]));
  // Ghilani & Wolf: C_T = α(T − Ts)L, C_P = (P − Ps)L/(AE), C_S = −n·w²Ls³/(24P²), α = 11.6e-6 /°C
  const L = 30;
  const cT = 11.6e-6 * (31 - 20) * L;
  const cP = ((70 - 50) * L) / (2.6e-6 * 200e9);
  const cS = -2 * ((0.2 ** 2 * (L / 2) ** 3) / (24 * 70 ** 2));
  expect(got.get(taped.id)!.referenceM).toBeCloseTo(L + cT + cP + cS, 12);
  // station (1000, 2000, 50 + 1.5), target (1030, 2040, 51 + 0.3): √(30² + 40² + (−0.2)²)
  expect(got.get(surveyed.id)!.referenceM).toBeCloseTo(Math.sqrt(30 ** 2 + 40 ** 2 + 0.2 ** 2), 9);
  expect(got.get(surveyed.id)!.referenceMethod).toBe("coordinates");
});

test("unknown sensor, site, session, tape, station or foreign target are rejected at the right path", async () => {
  const w = await world();
  const other = await makeSite();
  const good = session(w);
  const badSensor = session(w, { sensorId: "no-such-sensor", siteId: "no-such-site" });
  const shotOfBad = edmShot(badSensor.id, undefined, 10, [10]);
  const orphan = edmShot(uid(), undefined, 10, [10]);
  const badTape = { ...edmShot(good.id, undefined, 0, [10]), reference: { method: "tape", distanceM: 10, tape: { tapeId: "no-such-tape", tempC: 20, tensionN: 50, support: "ground" } } };
  const badStation = { ...edmShot(good.id, w.dark.id, 0, [10]), reference: { method: "coordinates", stationId: "nope", instrumentHeightM: 1.5, targetHeightM: 0 } };
  const noTarget = { ...edmShot(good.id, undefined, 0, [10]), reference: { method: "coordinates", stationId: w.site.stations[0]!.id, instrumentHeightM: 1.5, targetHeightM: 0 } };
  const foreign = edmShot(good.id, other.targets[0]!.id, 10, [10]);
  const a = await sync(w.crew, { deviceId: "t", sessions: [good, badSensor], shots: [shotOfBad, orphan, badTape, badStation, noTarget, foreign] });
  const r = a.json.results as { id: string; status: string; errors?: { path: string; message: string }[] }[];
  expect(r.map((x) => x.status)).toEqual(["accepted", "rejected", "rejected", "rejected", "rejected", "rejected", "rejected", "rejected"]);
  expect(r[1]!.errors!.map((e) => e.path)).toEqual(["sensorId", "siteId"]);
  expect(r[2]!.errors![0]!.path).toBe("sessionId");
  expect(r[2]!.errors![0]!.message).toMatch(/session .* was rejected/);
  expect(r[3]!.errors![0]!.path).toBe("sessionId");
  expect(r[3]!.errors![0]!.message).toMatch(/unknown/);
  expect(r[4]!.errors![0]!.path).toBe("reference.tape.tapeId");
  expect(r[5]!.errors![0]!.path).toBe("reference.stationId");
  expect(r[6]!.errors![0]!.path).toBe("targetId");
  expect(r[7]!.errors![0]!.path).toBe("targetId");
});

test("a shot may follow its session in a later request; the domain's own checks come back with their path", async () => {
  const w = await world({ sensor: { kind: "cw", wavelengthNm: 850, modulationHz: [20e6], label: "Depth camera D1" } });
  const s = session(w);
  expect((await sync(w.crew, { deviceId: "t", sessions: [s] })).json.results[0].status).toBe("accepted");
  const flat = { ...edmShot(s.id, undefined, 3, [3]), readings: { phase: [{ frequencyHz: 20e6, samples: [1000, 1000, 1000, 1000] }] } };
  // ranging.md's regression values: these four samples at 20 MHz give 3.000 m
  const good = { ...edmShot(s.id, undefined, 3, [3]), readings: { phase: [{ frequencyHz: 20e6, samples: [594.9808, 1293.1884, 1405.0192, 706.8116] }] } };
  const a = await sync(w.crew, { deviceId: "t", shots: [flat, good] });
  expect(a.json.results[0].status).toBe("rejected");
  expect(a.json.results[0].errors[0].path).toBe("readings.phase.0.samples");
  expect(a.json.results[1].status).toBe("accepted");
  const [row] = await getDb().select().from(shots).where(eq(shots.id, good.id));
  expect(Math.abs(row!.errorMm)).toBeLessThan(5); // 3.000 m in ranging.md, to the mm shown there
});

test("zod errors name the field relative to the record, one entry per field", async () => {
  const w = await world();
  const s = session(w, { startedAt: "yesterday", humidityPct: 140 });
  const shot = { ...edmShot(uid(), undefined, 10, [10]), reflectancePct: 250, reference: { method: "laser" }, readings: { rangesM: [10], roundTripNs: [66] } };
  const a = await sync(w.crew, { deviceId: "t", sessions: [s], shots: [shot] });
  expect(a.json.results[0].errors.map((e: { path: string }) => e.path).sort()).toEqual(["humidityPct", "startedAt"]);
  expect(a.json.results[1].errors.map((e: { path: string }) => e.path).sort()).toEqual(["readings", "reference.method", "reflectancePct"]);
});

test("a session in a project is stored with its rule: the per-shot limit uses that k", async () => {
  const w = await world({ project: { coverageK: 3 } });
  const s = session(w);
  const shot = edmShot(s.id, w.dark.id, 100, [100.014]);
  await sync(w.crew, { deviceId: "t", sessions: [s], shots: [shot] });
  const [row] = await getDb().select().from(shots).where(eq(shots.id, shot.id));
  // T = 5 + 10·100/1000 = 6 mm; L = 3·6 = 18 mm; e = 14 mm → within (with k = 2 it would not be)
  expect(row!.limitMm).toBeCloseTo(18, 9);
  expect(row!.within).toBe(true);
  const [sess] = await getDb().select({ projectId: checkSessions.projectId }).from(checkSessions).where(eq(checkSessions.id, s.id));
  expect(sess!.projectId).not.toBeNull();
});

test("recomputeShotsForSensor applies a changed spec to every stored shot", async () => {
  const w = await world();
  const s = session(w);
  const list = [edmShot(s.id, w.dark.id, 100, [100.009]), edmShot(s.id, w.dark.id, 50, [50.004])];
  await sync(w.crew, { deviceId: "t", sessions: [s], shots: list });
  const before = await getDb().select().from(shots).where(eq(shots.sensorId, w.sensor.id));
  expect(before.map((r) => r.within).sort()).toEqual([true, true]);
  await getDb().update(sensors).set({ toleranceMm: 1, tolerancePpm: 0 }).where(eq(sensors.id, w.sensor.id));
  expect(await recomputeShotsForSensor(w.sensor.id)).toBe(2);
  const after = new Map((await getDb().select().from(shots).where(eq(shots.sensorId, w.sensor.id))).map((r) => [r.id, r]));
  // T = 1 mm everywhere, L = 2 mm: errors of 9 mm and 4 mm are now outside
  expect(after.get(list[0]!.id)!.limitMm).toBeCloseTo(2, 12);
  expect(after.get(list[0]!.id)!.within).toBe(false);
  expect(after.get(list[1]!.id)!.within).toBe(false);
  expect(after.get(list[0]!.id)!.errorMm).toBeCloseTo(9, 9);
});

test("retro comes from the target, reflectance from the shot; ingestSync is callable without HTTP", async () => {
  const w = await world();
  const s = session(w);
  const shot = edmShot(s.id, w.retro.id, 15, [15.001], { reflectancePct: 40 });
  const a = await ingestSync({ id: w.crew.id, role: "crew" }, { deviceId: "csv-import", sessions: [s], shots: [shot] });
  expect(a.status).toBe(200);
  const [row] = await getDb().select().from(shots).where(eq(shots.id, shot.id));
  expect(row!.retro).toBe(true);
  expect(row!.reflectancePct).toBe(40);
  const audits = await getDb().select().from(auditLog).where(eq(auditLog.entityId, "csv-import"));
  expect(audits).toHaveLength(1);
  expect(audits[0]!.detail).toMatchObject({ sessions: 1, shots: 1, accepted: 2 });
});

test("null and an absent optional field are the same record: re-sent with nulls it is a duplicate", async () => {
  const w = await world();
  const s = session(w, { airTempC: undefined, note: undefined });
  const shot = edmShot(s.id, w.dark.id, 12, [12.001]);
  await sync(w.crew, { deviceId: "t", sessions: [s], shots: [shot] });
  const again = await sync(w.crew, { deviceId: "t", sessions: [{ ...s, airTempC: null, note: null }], shots: [{ ...shot, incidenceDeg: null, position: null }] });
  expect(again.json.results.map((r: { status: string }) => r.status)).toEqual(["duplicate", "duplicate"]);
});
