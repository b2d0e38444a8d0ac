// POST /api/sensors, /api/tapes, /api/sites through the real actions against the per-file
// database: 201 / 200 (same body) / 400 (field errors) / 401 / 403 / 409, client ids kept,
// sites answering their targets' and stations' ids, the audit trail written.
import { expect, test } from "vitest";
import { and, eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { auditLog, sensors, stations, targets } from "~/db/schema";
import { action as sensorsAction } from "~/routes/api.sensors";
import { action as tapesAction } from "~/routes/api.tapes";
import { action as sitesAction } from "~/routes/api.sites";
import { apiRequest, call, makeUser } from "../support/registry-fixtures";

const uid = () => crypto.randomUUID();

const sensorBody = (over: Record<string, unknown> = {}) => ({
  label: "Tripod scanner T2",
  serial: `FH-T2-${uid().slice(0, 6)}`,
  kind: "pulsed",
  wavelengthNm: 1550,
  appliesAirCorrection: false,
  assumedRefractivity: 281.8,
  toleranceMm: 3,
  tolerancePpm: 10,
  outdoor: true,
  calibrationDue: "2026-09-30",
  ...over,
});

const tapeBody = (over: Record<string, unknown> = {}) => ({
  label: `Steel tape 50 m ${uid().slice(0, 4)}`,
  standardTempC: 20,
  standardTensionN: 50,
  areaMm2: 2.6,
  modulusGPa: 200,
  weightNPerM: 0.2,
  calibrationPpm: 12,
  ...over,
});

const siteBody = (over: Record<string, unknown> = {}) => ({
  name: `Roadside test range ${uid().slice(0, 4)}`,
  lat: 46.5123,
  lon: 7.4321,
  stations: [{ label: "S1", grid: { e: 1000, n: 2000, h: 512.3 } }],
  targets: [
    { label: "T10-dark", reflectancePct: 10, referenceM: 10.002, grid: { e: 1010, n: 2000.1, h: 512.4 } },
    { label: "T30-white", reflectancePct: 85, referenceM: 30.011 },
    { label: "P50-prism", reflectancePct: 100, retro: true, geo: { lat: 46.5127, lon: 7.4325, h: 560.2 } },
  ],
  ...over,
});

const post = (fn: typeof sensorsAction | typeof tapesAction | typeof sitesAction, path: string, opts: Parameters<typeof apiRequest>[1]) =>
  call(fn as never, apiRequest(path, { method: "POST", ...opts }));

// ---------- guards before validation ----------
test("POST /api/sensors without a token answers 401 even for a bad body", async () => {
  const r = await post(sensorsAction, "/api/sensors", { json: { nonsense: true } });
  expect(r.status).toBe(401);
  expect(r.json.error).toMatch(/Not signed in/);
});

test("POST /api/sensors, /api/tapes and /api/sites answer 403 to every role but admin, before validation", async () => {
  for (const role of ["crew", "qa", "viewer"] as const) {
    const user = await makeUser(role);
    for (const [fn, path] of [
      [sensorsAction, "/api/sensors"],
      [tapesAction, "/api/tapes"],
      [sitesAction, "/api/sites"],
    ] as const) {
      const r = await post(fn, path, { user, json: { bad: 1 } });
      expect(r.status, `${role} ${path}`).toBe(403);
      expect(r.json.errors).toBeUndefined();
    }
  }
});

// ---------- sensors ----------
test("a sensor is created (201), the same body again is 200 with the same id, other content under the id is 409", async () => {
  const admin = await makeUser("admin");
  const id = `sensor-${uid()}`;
  const body = sensorBody({ id });
  const first = await post(sensorsAction, "/api/sensors", { user: admin, json: body });
  expect(first.status).toBe(201);
  expect(first.json).toEqual({ id });

  const again = await post(sensorsAction, "/api/sensors", { user: admin, json: body });
  expect(again.status).toBe(200);
  expect(again.json).toEqual({ id });

  const other = await post(sensorsAction, "/api/sensors", { user: admin, json: { ...body, toleranceMm: 4 } });
  expect(other.status).toBe(409);
  expect(other.json.error).toContain(id);

  const [row] = await getDb().select().from(sensors).where(eq(sensors.id, id));
  expect(row).toMatchObject({
    label: "Tripod scanner T2",
    kind: "pulsed",
    wavelengthNm: 1550,
    appliesAirCorrection: false,
    assumedRefractivity: 281.8,
    toleranceMm: 3,
    tolerancePpm: 10,
    calibrationDue: "2026-09-30",
    modulationHz: [],
  });
  const audits = await getDb()
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.entity, "sensor"), eq(auditLog.entityId, id)));
  expect(audits.map((a) => [a.action, a.actorUserId])).toEqual([["create", admin.id]]);
});

test("without an id the server makes one, and the same body again finds that sensor (200, same id)", async () => {
  const admin = await makeUser("admin");
  const body = sensorBody({ kind: "cw", wavelengthNm: 850, modulationHz: [20e6, 25e6], appliesAirCorrection: true });
  delete (body as { assumedRefractivity?: number }).assumedRefractivity;
  const first = await post(sensorsAction, "/api/sensors", { user: admin, json: body });
  expect(first.status).toBe(201);
  expect(first.json.id).toMatch(/^[0-9a-f-]{36}$/);
  const again = await post(sensorsAction, "/api/sensors", { user: admin, json: body });
  expect(again.status).toBe(200);
  expect(again.json.id).toBe(first.json.id);
  const [row] = await getDb().select().from(sensors).where(eq(sensors.id, first.json.id));
  expect(row!.modulationHz).toEqual([20e6, 25e6]);
  expect(row!.assumedRefractivity).toBe(0);
  // Another sensor with the same label and serial but other figures is a new record.
  const changed = await post(sensorsAction, "/api/sensors", { user: admin, json: { ...body, tolerancePpm: 20 } });
  expect(changed.status).toBe(201);
  expect(changed.json.id).not.toBe(first.json.id);
});

test("a bad sensor body answers 400 with one error per field, paths as in the body", async () => {
  const admin = await makeUser("admin");
  const r = await post(sensorsAction, "/api/sensors", {
    user: admin,
    json: {
      label: "",
      serial: "FH-1",
      kind: "cw",
      wavelengthNm: 250,
      modulationHz: [20e6, -5],
      appliesAirCorrection: "yes",
      toleranceMm: -1,
      tolerancePpm: "10",
      calibrationDue: "2026-02-30",
    },
  });
  expect(r.status).toBe(400);
  expect(typeof r.json.error).toBe("string");
  const byPath = Object.fromEntries((r.json.errors as { path: string; message: string }[]).map((e) => [e.path, e.message]));
  expect(byPath.label).toMatch(/Enter a label/);
  expect(byPath.wavelengthNm).toMatch(/300 and 2000 nm/);
  expect(byPath["modulationHz.1"]).toMatch(/above 0 Hz/);
  expect(byPath.appliesAirCorrection).toMatch(/air correction/);
  expect(byPath.toleranceMm).toMatch(/0 mm or more/);
  expect(byPath.tolerancePpm).toMatch(/must be a number/);
  expect(byPath.calibrationDue).toMatch(/does not exist/);
  expect(byPath.serial).toBeUndefined();
  expect(await getDb().select().from(sensors).where(eq(sensors.serial, "FH-1"))).toEqual([]);
});

test("a continuous-wave sensor without a modulation frequency is refused at modulationHz", async () => {
  const admin = await makeUser("admin");
  const r = await post(sensorsAction, "/api/sensors", { user: admin, json: sensorBody({ kind: "cw", modulationHz: [] }) });
  expect(r.status).toBe(400);
  expect(r.json.errors).toEqual([{ path: "modulationHz", message: "A continuous-wave sensor needs at least one modulation frequency (Hz)" }]);
});

test("a body that is not JSON answers 400 and writes nothing", async () => {
  const admin = await makeUser("admin");
  const before = (await getDb().select().from(sensors)).length;
  const r = await post(sensorsAction, "/api/sensors", { user: admin, body: "{label: nope", headers: { "Content-Type": "application/json" } });
  expect(r.status).toBe(400);
  expect(r.json.error).toMatch(/not JSON/);
  expect((await getDb().select().from(sensors)).length).toBe(before);
});

// ---------- tapes ----------
test("a tape: 201, same body 200, other content 409, bad fields 400", async () => {
  const admin = await makeUser("admin");
  const id = `tape-${uid()}`;
  const body = tapeBody({ id });
  expect((await post(tapesAction, "/api/tapes", { user: admin, json: body })).status).toBe(201);
  const again = await post(tapesAction, "/api/tapes", { user: admin, json: body });
  expect([again.status, again.json]).toEqual([200, { id }]);
  expect((await post(tapesAction, "/api/tapes", { user: admin, json: { ...body, calibrationPpm: -3 } })).status).toBe(409);
  const bad = await post(tapesAction, "/api/tapes", { user: admin, json: tapeBody({ areaMm2: 0, modulusGPa: null, standardTempC: 90 }) });
  expect(bad.status).toBe(400);
  expect((bad.json.errors as { path: string }[]).map((e) => e.path).sort()).toEqual(["areaMm2", "modulusGPa", "standardTempC"]);
});

// ---------- sites ----------
test("a site with stations and targets: 201 lists their ids in order; same body 200 with the same answer", async () => {
  const admin = await makeUser("admin");
  const body = siteBody({ id: `site-${uid()}`, targets: [...siteBody().targets.slice(0, 2), { id: `tgt-${uid()}`, label: "P50-prism", reflectancePct: 100, retro: true }] }) as ReturnType<
    typeof siteBody
  > & {
    id: string;
    targets: { id?: string; label: string }[];
  };
  const first = await post(sitesAction, "/api/sites", { user: admin, json: body });
  expect(first.status).toBe(201);
  expect(first.json.id).toBe(body.id);
  expect(first.json.targets.map((t: { label: string }) => t.label)).toEqual(["T10-dark", "T30-white", "P50-prism"]);
  expect(first.json.targets[2].id).toBe(body.targets[2]!.id);
  expect(first.json.stations).toEqual([{ id: expect.any(String), label: "S1" }]);

  const again = await post(sitesAction, "/api/sites", { user: admin, json: body });
  expect(again.status).toBe(200);
  expect(again.json).toEqual(first.json);

  const rows = await getDb()
    .select()
    .from(targets)
    .where(eq(targets.siteId, body.id as string));
  const dark = rows.find((t) => t.label === "T10-dark")!;
  expect(dark).toMatchObject({ reflectancePct: 10, referenceM: 10.002, gridE: 1010, gridN: 2000.1, gridH: 512.4, retro: false });
  const [st] = await getDb()
    .select()
    .from(stations)
    .where(eq(stations.siteId, body.id as string));
  expect(st).toMatchObject({ label: "S1", gridE: 1000, gridN: 2000, gridH: 512.3, lat: null });

  const changed = await post(sitesAction, "/api/sites", { user: admin, json: { ...body, targets: body.targets.slice(0, 2) } });
  expect(changed.status).toBe(409);
});

test("without ids the same site body twice answers 200 with the first answer", async () => {
  const admin = await makeUser("admin");
  const body = siteBody();
  const first = await post(sitesAction, "/api/sites", { user: admin, json: body });
  expect(first.status).toBe(201);
  const again = await post(sitesAction, "/api/sites", { user: admin, json: body });
  expect(again.status).toBe(200);
  expect(again.json).toEqual(first.json);
});

test("a bad site body answers 400 with paths into its target and station rows", async () => {
  const admin = await makeUser("admin");
  const r = await post(sitesAction, "/api/sites", {
    user: admin,
    json: {
      name: "Bad range",
      lat: 95,
      targets: [
        { label: "A", reflectancePct: 120, referenceM: 0 },
        { label: "a", reflectancePct: 50, grid: { e: 1, n: 2 } },
      ],
      stations: [{ label: "S1", geo: { lat: 10, lon: 200, h: 0 } }],
    },
  });
  expect(r.status).toBe(400);
  const byPath = Object.fromEntries((r.json.errors as { path: string; message: string }[]).map((e) => [e.path, e.message]));
  expect(byPath.lat).toMatch(/between −90 and 90/);
  expect(byPath.lon).toMatch(/longitude with the latitude/);
  expect(byPath["targets.0.reflectancePct"]).toMatch(/between 0 and 100 %/);
  expect(byPath["targets.0.referenceM"]).toMatch(/above 0 m/);
  expect(byPath["targets.1.grid.h"]).toMatch(/Enter the height/);
  expect(byPath["targets.1.label"]).toMatch(/Another row/);
  expect(byPath["stations.0.geo.lon"]).toMatch(/between −180 and 180/);
});

test("a site needs at least one target, and a target id of another site is a conflict", async () => {
  const admin = await makeUser("admin");
  const none = await post(sitesAction, "/api/sites", { user: admin, json: { name: "Empty", targets: [] } });
  expect(none.status).toBe(400);
  expect(none.json.errors).toEqual([{ path: "targets", message: "A site needs at least one target" }]);

  const tid = `tgt-${uid()}`;
  expect((await post(sitesAction, "/api/sites", { user: admin, json: siteBody({ targets: [{ id: tid, label: "T1", reflectancePct: 50 }] }) })).status).toBe(201);
  const clash = await post(sitesAction, "/api/sites", { user: admin, json: siteBody({ targets: [{ id: tid, label: "T1", reflectancePct: 50 }] }) });
  expect(clash.status).toBe(409);
  expect(clash.json.error).toContain(tid);
});
