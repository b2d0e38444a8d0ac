// The sensor admin screens through their real loaders and actions (form posts as a browser
// without JavaScript sends them) against the per-file database: create, a 400 with every bad
// field's own message and the typed value kept, modulation rows, edit with recomputation of stored
// shots (limit L = k·T, T = a + b·D/1000, ranging.md §4), retire.
import { expect, test } from "vitest";
import { and, eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { auditLog, sensors, shots } from "~/db/schema";
import { createSensor, getSensorSpec } from "~/models/sensors.server";
import { createSite } from "~/models/sites.server";
import { ingestSync } from "~/models/sync.server";
import * as sensorList from "~/routes/admin.sensors";
import * as sensorNew from "~/routes/admin.sensors.new";
import * as sensorEdit from "~/routes/admin.sensors.$sensorId";
import { makeUser, shareProject } from "../support/registry-fixtures";
import { uid, ok, form, req, run, type Fn, type Reply, goodSensor } from "../support/admin-forms";

test("an admin creates a sensor through the form: redirect to the list, row and audit written", async () => {
  const admin = await makeUser("admin");
  const serial = `FH-R1-${uid().slice(0, 6)}`;
  const a = await run(sensorNew.action as Fn, req("/admin/sensors/new", admin, form({ ...goodSensor, serial })));
  expect(a.status).toBe(302);
  expect(a.location).toBe("/admin/sensors");
  const [row] = await getDb().select().from(sensors).where(eq(sensors.serial, serial));
  expect(row).toMatchObject({
    label: "Roof scanner R1",
    kind: "pulsed",
    wavelengthNm: 905,
    appliesAirCorrection: true,
    outdoor: true,
    toleranceMm: 5,
    tolerancePpm: 10,
    calibrationDue: "2026-10-01",
    notes: "Van 2, left rack",
  });
  const audit = await getDb()
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.entity, "sensor"), eq(auditLog.entityId, row!.id)));
  expect(audit.map((x) => [x.action, x.actorUserId])).toEqual([["create", admin.id]]);
});

test("each bad sensor field gets its own message, answered 400, and keeps what was typed", async () => {
  const admin = await makeUser("admin");
  const cases: [string, string, RegExp][] = [
    ["label", "   ", /Enter a label/],
    ["wavelengthNm", "5000", /between 300 and 2000 nm/],
    ["wavelengthNm", "nine", /must be a number/],
    ["toleranceMm", "-2", /0 mm or more/],
    ["tolerancePpm", "12,5", /must be a number/],
    ["assumedRefractivity", "2000", /between 0 and 1000 ppm/],
    ["calibrationDue", "01/10/2026", /YYYY-MM-DD/],
    ["kind", "laser", /pulsed or continuous-wave/],
  ];
  for (const [field, value, message] of cases) {
    const a = await run(sensorNew.action as Fn, req("/admin/sensors/new", admin, form({ ...goodSensor, serial: `X-${uid()}`, [field]: value })));
    expect(a.status, `${field}=${value}`).toBe(400);
    const { result } = a.body as Reply;
    expect(result.error[field]?.join(" "), `${field}=${value}`).toMatch(message);
    expect(Object.keys(result.error), `${field}=${value}`).toEqual([field]);
    expect(result.initialValue[field]).toBe(value);
    expect(result.initialValue.serial).toMatch(/^X-/);
  }
  // Radios left unanswered, and a continuous-wave sensor with no frequency, all at once.
  const { appliesAirCorrection: _a, ...rest } = goodSensor;
  const a = await run(sensorNew.action as Fn, req("/admin/sensors/new", admin, form({ ...rest, kind: "cw", serial: "" })));
  expect(a.status).toBe(400);
  const { result } = a.body as Reply;
  expect(result.error.serial).toEqual(["Enter the serial number"]);
  expect(result.error.appliesAirCorrection?.[0]).toMatch(/air correction/);
  expect(result.error.modulationHz).toEqual(["A continuous-wave sensor needs at least one modulation frequency (Hz)"]);
  expect(result.initialValue.kind).toBe("cw");
});

test("modulation frequencies come in as a list of rows; the list intent adds a row without saving", async () => {
  const admin = await makeUser("admin");
  const serial = `FH-D3-${uid().slice(0, 6)}`;
  const base = { ...goodSensor, serial, kind: "cw", wavelengthNm: "850" };
  const add = form({ ...base, "modulationHz[0]": "20000000", __intent__: JSON.stringify({ type: "insert", payload: { name: "modulationHz" } }) });
  const a1 = await run(sensorNew.action as Fn, req("/admin/sensors/new", admin, add));
  expect(a1.status).toBe(200);
  expect((a1.body as Reply).result.initialValue.modulationHz).toEqual(["20000000", undefined]);
  expect(await getDb().select().from(sensors).where(eq(sensors.serial, serial))).toEqual([]);

  const a2 = await run(sensorNew.action as Fn, req("/admin/sensors/new", admin, form({ ...base, "modulationHz[0]": "20000000", "modulationHz[1]": "25000000" })));
  expect(a2.status).toBe(302);
  const [row] = await getDb().select().from(sensors).where(eq(sensors.serial, serial));
  expect(row!.modulationHz).toEqual([20e6, 25e6]);
  expect((await getSensorSpec(row!.id))!).toEqual({
    id: row!.id,
    kind: "cw",
    wavelengthNm: 850,
    modulationHz: [20e6, 25e6],
    appliesAirCorrection: true,
    assumedRefractivity: 0,
    toleranceMm: 5,
    tolerancePpm: 10,
    outdoor: true,
  });
});

test("editing a sensor's tolerance saves, lands in the audit trail and recomputes its stored shots", async () => {
  const [admin, crew] = await Promise.all([makeUser("admin"), makeUser("crew")]);
  const s = await ok(createSensor(null, { label: "Roof scanner R9", serial: `FH-${uid()}`, kind: "pulsed", wavelengthNm: 905, appliesAirCorrection: true, toleranceMm: 5, tolerancePpm: 10 }));
  const site = await ok(createSite("system", { name: `Yard ${uid()}`, targets: [{ label: "T1", reflectancePct: 50 }] }));
  const sensorId = s.body.id;
  await shareProject([{ id: sensorId }], [{ id: site.body.id }], [crew]); // issue 14
  const sessionId = uid();
  const shotId = uid();
  const sync = await ingestSync(crew, {
    deviceId: "tablet-7",
    sessions: [{ id: sessionId, sensorId, siteId: site.body.id, startedAt: "2026-05-04T08:10:00+02:00", airTempC: 18.5, pressureHpa: 1004.2, humidityPct: 62 }],
    shots: [{ id: shotId, sessionId, takenAt: "2026-05-04T08:20:00+02:00", reference: { method: "edm", distanceM: 50 }, readings: { rangesM: [50.006] }, reflectancePct: 50, illuminanceKlux: 20 }],
  });
  expect(sync.status).toBe(200);
  expect(JSON.stringify(sync.body)).not.toContain("rejected");
  const before = (await getDb().select().from(shots).where(eq(shots.id, shotId)))[0]!;
  // T(50 m) = 5 + 10·50/1000 = 5.5 mm; L = 2·T = 11 mm.
  expect(before.toleranceMm).toBeCloseTo(5.5, 9);
  expect(before.limitMm).toBeCloseTo(11, 9);

  const edited = await run(
    sensorEdit.action as Fn,
    req(`/admin/sensors/${sensorId}`, admin, form({ ...goodSensor, label: "Roof scanner R9", serial: "FH-R9", toleranceMm: "1", tolerancePpm: "2", calibrationDue: "" })),
    { sensorId },
  );
  expect(edited.status).toBe(302);
  const after = (await getDb().select().from(shots).where(eq(shots.id, shotId)))[0]!;
  // T(50 m) = 1 + 2·50/1000 = 1.1 mm; L = 2.2 mm; the same raw error now falls outside.
  expect(after.toleranceMm).toBeCloseTo(1.1, 9);
  expect(after.limitMm).toBeCloseTo(2.2, 9);
  expect(after.errorMm).toBeCloseTo(before.errorMm, 9);
  expect(Math.abs(after.errorMm) > after.limitMm).toBe(!after.within);

  const updates = await getDb()
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.entity, "sensor"), eq(auditLog.entityId, sensorId), eq(auditLog.action, "update")));
  expect(updates).toHaveLength(1);
  expect(updates[0]!.actorUserId).toBe(admin.id);
  expect(Object.keys(updates[0]!.detail as object).sort()).toEqual(["notes", "serial", "toleranceMm", "tolerancePpm"]);
  expect((updates[0]!.detail as Record<string, unknown>).toleranceMm).toEqual({ from: 5, to: 1 });
});

test("retiring a sensor needs the confirmation, hides it from the list, keeps its row and spec", async () => {
  const admin = await makeUser("admin");
  const s = await ok(
    createSensor(
      { id: admin.id },
      {
        label: `Depth camera ${uid().slice(0, 4)}`,
        serial: `FH-${uid()}`,
        kind: "cw",
        wavelengthNm: 850,
        modulationHz: [20e6],
        appliesAirCorrection: true,
        toleranceMm: 8,
        tolerancePpm: 0,
        outdoor: false,
      },
    ),
  );
  const sensorId = s.body.id;
  const unconfirmed = await run(sensorEdit.action as Fn, req(`/admin/sensors/${sensorId}`, admin, form({ intent: "retire" })), { sensorId });
  expect(unconfirmed.status).toBe(400);
  expect((unconfirmed.body as { retireError: string }).retireError).toMatch(/confirm/);
  expect((await getDb().select().from(sensors).where(eq(sensors.id, sensorId)))[0]!.retiredAt).toBeNull();

  const retired = await run(sensorEdit.action as Fn, req(`/admin/sensors/${sensorId}`, admin, form({ intent: "retire", confirm: "yes", reason: "Lens cracked" })), { sensorId });
  expect(retired.status).toBe(302);
  const [row] = await getDb().select().from(sensors).where(eq(sensors.id, sensorId));
  expect(row!.retiredAt).not.toBeNull();
  expect(await getSensorSpec(sensorId)).not.toBeNull();

  const list = await run(sensorList.loader as Fn, req("/admin/sensors", admin));
  expect((list.body as { sensors: { id: string }[] }).sensors.map((x) => x.id)).not.toContain(sensorId);
  const withRetired = await run(sensorList.loader as Fn, req("/admin/sensors?retired=show", admin));
  expect((withRetired.body as { sensors: { id: string; retiredAt: string | null }[] }).sensors.find((x) => x.id === sensorId)?.retiredAt).toBe(row!.retiredAt);

  const audit = await getDb()
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.entity, "sensor"), eq(auditLog.entityId, sensorId), eq(auditLog.action, "retire")));
  expect(audit[0]!.detail).toEqual({ reason: "Lens cracked" });

  const restored = await run(sensorEdit.action as Fn, req(`/admin/sensors/${sensorId}`, admin, form({ intent: "restore" })), { sensorId });
  expect(restored.status).toBe(302);
  expect((await getDb().select().from(sensors).where(eq(sensors.id, sensorId)))[0]!.retiredAt).toBeNull();
});
