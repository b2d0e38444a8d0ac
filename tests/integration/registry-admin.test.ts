// The registry's admin screens through their real loaders and actions (form posts as a browser
// without JavaScript sends them) against the per-file database: create, edit, retire for each
// entity; a 400 with every bad field's own message and the typed value kept; recomputation of
// stored shots when a sensor's tolerance or a project's rule changes (limit L = k·T, T = a + b·D/1000,
// ranging.md §4).
import { expect, test } from "vitest";
import { and, eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { auditLog, sensors, shots, sites, stations, targets, tapes } from "~/db/schema";
import { DEFAULT_RULE } from "~/domain";
import { createProject, getProject, getProjectRule } from "~/models/projects.server";
import { createSensor, getSensorSpec } from "~/models/sensors.server";
import { createSite, getSiteGeometry } from "~/models/sites.server";
import { getTapeSpec } from "~/models/tapes.server";
import type { RegistryResult } from "~/contract/registry";
import { ingestSync } from "~/models/sync.server";
import * as sensorList from "~/routes/admin.sensors";
import * as sensorNew from "~/routes/admin.sensors.new";
import * as sensorEdit from "~/routes/admin.sensors.$sensorId";
import * as tapeNew from "~/routes/admin.tapes.new";
import * as tapeEdit from "~/routes/admin.tapes.$tapeId";
import * as tapeList from "~/routes/admin.tapes";
import * as siteList from "~/routes/admin.sites";
import * as siteNew from "~/routes/admin.sites.new";
import * as siteEdit from "~/routes/admin.sites.$siteId";
import * as projectNew from "~/routes/admin.projects.new";
import * as projectEdit from "~/routes/admin.projects.$projectId";
import * as projectList from "~/routes/admin.projects";
import { answerOf } from "./auth-helpers";
import { makeUser, type TestUser, shareProject, addMemberUsers } from "../support/registry-fixtures";

const uid = () => crypto.randomUUID();

type Created = Extract<RegistryResult, { status: 200 | 201 }>;
/** A model call that must succeed, narrowed to its success answer. */
async function ok(p: Promise<RegistryResult>): Promise<Created> {
  const r = await p;
  if (r.status !== 201 && r.status !== 200) throw new Error(`expected success, got ${r.status} ${JSON.stringify(r.body)}`);
  return r;
}

function form(fields: Record<string, string | string[]>) {
  const fd = new FormData();
  for (const [k, v] of Object.entries(fields)) for (const x of Array.isArray(v) ? v : [v]) fd.append(k, x);
  return fd;
}

function req(path: string, user: TestUser | null, body?: FormData) {
  const headers: Record<string, string> = user ? { Authorization: `Bearer ${user.token}` } : {};
  return new Request(`http://localhost${path}`, { method: body ? "POST" : "GET", headers, body });
}

type Fn = (args: never) => unknown;
const run = (fn: Fn, request: Request, params: Record<string, string> = {}) => answerOf(() => fn({ request, params, context: {} } as never) as Promise<unknown>);

type Reply = { result: { status: string; error: Record<string, string[]>; initialValue: Record<string, unknown> } };

const goodSensor = {
  label: "Roof scanner R1",
  serial: "FH-R1-0001",
  kind: "pulsed",
  wavelengthNm: "905",
  appliesAirCorrection: "true",
  assumedRefractivity: "0",
  toleranceMm: "5",
  tolerancePpm: "10",
  outdoor: "true",
  calibrationDue: "2026-10-01",
  notes: "Van 2, left rack",
};

// ---------- sensors ----------
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

test("every role reads the sensor and site lists; only an admin may open the forms", async () => {
  const viewer = await makeUser("viewer");
  const list = await run(sensorList.loader as Fn, req("/admin/sensors", viewer));
  expect(list.status).toBe(200);
  expect((list.body as { canEdit: boolean }).canEdit).toBe(false);
  expect((await run(siteList.loader as Fn, req("/admin/sites", viewer))).status).toBe(200);
  expect((await run(sensorNew.loader as Fn, req("/admin/sensors/new", viewer))).status).toBe(403);
  expect((await run(sensorNew.action as Fn, req("/admin/sensors/new", viewer, form(goodSensor)))).status).toBe(403);
  // issue 14: the tape list is read like the sensor list, each user their projects' tapes (this viewer has none)
  const tapesSeen = await run(tapeList.loader as Fn, req("/admin/tapes", viewer));
  expect(tapesSeen.status).toBe(200);
  expect(tapesSeen.body).toMatchObject({ canEdit: false, tapes: [] });
  expect((await run(projectList.loader as Fn, req("/admin/projects", viewer))).status).toBe(403);
  const anon = await run(sensorList.loader as Fn, req("/admin/sensors", null));
  expect(anon.status).toBe(302);
  expect(anon.location).toMatch(/^\/login\?redirectTo=/);
});

// ---------- tapes ----------
test("tapes: create, a 400 per bad field with typed values kept, edit, retire", async () => {
  const admin = await makeUser("admin");
  const label = `Steel tape 30 m ${uid().slice(0, 6)}`;
  const good = { label, standardTempC: "20", standardTensionN: "50", areaMm2: "2.6", modulusGPa: "200", weightNPerM: "0.2", calibrationPpm: "15" };
  const bad = await run(tapeNew.action as Fn, req("/admin/tapes/new", admin, form({ ...good, standardTensionN: "0", areaMm2: "", weightNPerM: "heavy" })));
  expect(bad.status).toBe(400);
  const { result } = bad.body as Reply;
  expect(result.error.standardTensionN).toEqual(["The tension must be above 0 N"]);
  expect(result.error.areaMm2).toEqual(["Enter the cross-section (mm²)"]);
  expect(result.error.weightNPerM?.[0]).toMatch(/must be a number/);
  expect(result.initialValue).toMatchObject({ label, standardTensionN: "0", weightNPerM: "heavy", calibrationPpm: "15" });

  expect((await run(tapeNew.action as Fn, req("/admin/tapes/new", admin, form(good)))).status).toBe(302);
  const [row] = await getDb().select().from(tapes).where(eq(tapes.label, label));
  expect(await getTapeSpec(row!.id)).toEqual({ standardTempC: 20, standardTensionN: 50, areaMm2: 2.6, modulusGPa: 200, weightNPerM: 0.2, calibrationPpm: 15 });

  const edit = await run(tapeEdit.action as Fn, req(`/admin/tapes/${row!.id}`, admin, form({ ...good, calibrationPpm: "-8" })), { tapeId: row!.id });
  expect(edit.status).toBe(302);
  expect((await getTapeSpec(row!.id))!.calibrationPpm).toBe(-8);

  expect((await run(tapeEdit.action as Fn, req(`/admin/tapes/${row!.id}`, admin, form({ intent: "retire", confirm: "yes" })), { tapeId: row!.id })).status).toBe(302);
  const list = await run(tapeList.loader as Fn, req("/admin/tapes", admin));
  expect((list.body as { tapes: { id: string }[] }).tapes.map((t) => t.id)).not.toContain(row!.id);
  expect(await getTapeSpec(row!.id)).not.toBeNull();
});

// ---------- sites ----------
const siteForm = (name: string, extra: Record<string, string> = {}) =>
  form({
    name,
    lat: "46.5123",
    lon: "7.4321",
    "stations[0].label": "S1",
    "stations[0].grid.e": "1000",
    "stations[0].grid.n": "2000",
    "stations[0].grid.h": "512.3",
    "targets[0].label": "T10-dark",
    "targets[0].reflectancePct": "10",
    "targets[0].referenceM": "10.002",
    "targets[1].label": "T30-white",
    "targets[1].reflectancePct": "85",
    "targets[1].retro": "on",
    "targets[1].geo.lat": "46.5127",
    "targets[1].geo.lon": "7.4325",
    "targets[1].geo.h": "560.2",
    ...extra,
  });

test("an admin creates a site with a station and two targets through the form", async () => {
  const admin = await makeUser("admin");
  const name = `Roadside range ${uid().slice(0, 6)}`;
  const a = await run(siteNew.action as Fn, req("/admin/sites/new", admin, siteForm(name)));
  expect(a.status).toBe(302);
  const [site] = await getDb().select().from(sites).where(eq(sites.name, name));
  const geo = await getSiteGeometry(site!.id);
  expect(geo).toMatchObject({
    name,
    lat: 46.5123,
    lon: 7.4321,
    stations: [{ label: "S1", grid: { e: 1000, n: 2000, h: 512.3 }, geo: null, retiredAt: null }],
    targets: [
      { label: "T10-dark", reflectancePct: 10, retro: false, referenceM: 10.002, grid: null, geo: null },
      { label: "T30-white", reflectancePct: 85, retro: true, referenceM: null, grid: null, geo: { lat: 46.5127, lon: 7.4325, h: 560.2 } },
    ],
  });
  const list = await run(siteList.loader as Fn, req("/admin/sites", admin));
  const mine = (list.body as { sites: { id: string; targetCount: number; stationCount: number; targetLabels: string }[] }).sites.find((s) => s.id === site!.id);
  expect(mine).toMatchObject({ targetCount: 2, stationCount: 1, targetLabels: "T10-dark, T30-white" });
});

test("bad values in a site's rows each get their message at the row's field, with the typed value kept", async () => {
  const admin = await makeUser("admin");
  const a = await run(
    siteNew.action as Fn,
    req("/admin/sites/new", admin, siteForm("Bad rows", { "targets[1].reflectancePct": "140", "targets[0].referenceM": "-3", "stations[0].grid.h": "", "targets[1].label": "t10-DARK" })),
  );
  expect(a.status).toBe(400);
  const { result } = a.body as Reply;
  expect(result.error["targets[1].reflectancePct"]).toEqual(["Reflectance lies between 0 and 100 %"]);
  expect(result.error["targets[0].referenceM"]).toEqual(["The reference distance must be above 0 m"]);
  expect(result.error["stations[0].grid.h"]).toEqual(["Enter the height (m)"]);
  expect(result.error["targets[1].label"]).toEqual(["Another row of this site has this label"]);
  const iv = result.initialValue as { targets: { reflectancePct: string; label: string }[] };
  expect(iv.targets[1]).toMatchObject({ reflectancePct: "140", label: "t10-DARK" });
  expect(await getDb().select().from(sites).where(eq(sites.name, "Bad rows"))).toEqual([]);
});

test("editing a site: a removed target is retired (not deleted), a new row is added, kept rows updated", async () => {
  const admin = await makeUser("admin");
  const created = await ok(
    createSite(null, {
      name: `Yard baseline ${uid().slice(0, 6)}`,
      stations: [{ label: "S1", grid: { e: 0, n: 0, h: 100 } }],
      targets: [
        { label: "T1", reflectancePct: 10, referenceM: 5 },
        { label: "T2", reflectancePct: 50, referenceM: 15 },
      ],
    }),
  );
  const siteId = created.body.id;
  const [t1, t2] = created.body.targets as { id: string; label: string }[];
  const [s1] = created.body.stations as { id: string }[];
  const fd = form({
    name: "Yard baseline (resurveyed)",
    "stations[0].id": s1!.id,
    "stations[0].label": "S1",
    "stations[0].grid.e": "0",
    "stations[0].grid.n": "0",
    "stations[0].grid.h": "100",
    "targets[0].id": t2!.id,
    "targets[0].label": "T2",
    "targets[0].reflectancePct": "50",
    "targets[0].referenceM": "15.004",
    "targets[1].label": "T3",
    "targets[1].reflectancePct": "85",
  });
  const a = await run(siteEdit.action as Fn, req(`/admin/sites/${siteId}`, admin, fd), { siteId });
  expect(a.status).toBe(302);
  const rows = await getDb().select().from(targets).where(eq(targets.siteId, siteId));
  expect(rows).toHaveLength(3);
  const byLabel = Object.fromEntries(rows.map((r) => [r.label, r]));
  expect(byLabel.T1!.id).toBe(t1!.id);
  expect(byLabel.T1!.retiredAt).not.toBeNull();
  expect(byLabel.T2!.referenceM).toBe(15.004);
  expect(byLabel.T2!.retiredAt).toBeNull();
  expect(byLabel.T3!.reflectancePct).toBe(85);
  expect((await getDb().select().from(stations).where(eq(stations.siteId, siteId)))[0]!.retiredAt).toBeNull();
  const [log] = await getDb()
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.entity, "site"), eq(auditLog.entityId, siteId), eq(auditLog.action, "update")));
  expect(log!.detail).toMatchObject({ site: { name: { to: "Yard baseline (resurveyed)" } }, targets: { added: ["T3"], changed: ["T2"], retired: ["T1"] } });

  const retire = await run(siteEdit.action as Fn, req(`/admin/sites/${siteId}`, admin, form({ intent: "retire", confirm: "yes" })), { siteId });
  expect(retire.status).toBe(302);
  expect((await getDb().select().from(sites).where(eq(sites.id, siteId)))[0]!.retiredAt).not.toBeNull();
  expect(await getSiteGeometry(siteId)).not.toBeNull();
});

// ---------- projects ----------
test("a project with the default rule links its sensors and sites; bad rule fields answer 400 each", async () => {
  const admin = await makeUser("admin");
  const s = await ok(createSensor(null, { label: "Roof scanner", serial: `FH-${uid()}`, kind: "pulsed", wavelengthNm: 905, appliesAirCorrection: true, toleranceMm: 5, tolerancePpm: 10 }));
  const site = await ok(createSite(null, { name: `Range ${uid()}`, targets: [{ label: "T1", reflectancePct: 10 }] }));
  const name = `Corridor ${uid().slice(0, 6)}`;
  const bad = await run(
    projectNew.action as Fn,
    req("/admin/projects/new", admin, form({ name, minShots: "2.5", coverageK: "0", minWithinPct: "101", rangeBandEdgesM: "0, 30, 10", sensorIds: [s.body.id, "no-such-sensor"] })),
  );
  expect(bad.status).toBe(400);
  const { result } = bad.body as Reply;
  expect(result.error.minShots).toEqual(["The minimum number of shots is a whole number"]);
  expect(result.error.coverageK).toEqual(["The coverage factor must be above 0"]);
  expect(result.error.minWithinPct).toEqual(["The share lies between 0 and 100 %"]);
  expect(result.error.rangeBandEdgesM?.[0]).toMatch(/must increase/);
  expect(result.initialValue).toMatchObject({ minShots: "2.5", rangeBandEdgesM: "0, 30, 10" });

  const unknown = await run(projectNew.action as Fn, req("/admin/projects/new", admin, form({ name, sensorIds: [s.body.id, "no-such-sensor"] })));
  expect(unknown.status).toBe(400);
  expect((unknown.body as Reply).result.error["sensorIds[1]"]).toEqual(['No sensor with id "no-such-sensor"']);

  const saved = await run(
    projectNew.action as Fn,
    req(
      "/admin/projects/new",
      admin,
      form({ name, client: "Fernhollow Geomatics", minShots: "20", coverageK: "2", minWithinPct: "95", rangeBandEdgesM: "0, 10, 30, 100", sensorIds: [s.body.id], siteIds: [site.body.id] }),
    ),
  );
  expect(saved.status).toBe(302);
  const list = await run(projectList.loader as Fn, req("/admin/projects", admin));
  const row = (list.body as { projects: { id: string; name: string; sensorLabels: string }[] }).projects.find((p) => p.name === name)!;
  expect(row.sensorLabels).toBe("Roof scanner");
  const full = await getProject(row.id);
  expect(full).toMatchObject({ client: "Fernhollow Geomatics", sensorIds: [s.body.id], siteIds: [site.body.id] });
  expect(await getProjectRule(row.id)).toEqual(DEFAULT_RULE);
  expect(await getProjectRule(null)).toEqual(DEFAULT_RULE);
  expect(await getProjectRule("no-such-project")).toEqual(DEFAULT_RULE);
});

test("changing a project's coverage factor recomputes the limits of its shots (L = k·T)", async () => {
  const [admin, crew] = await Promise.all([makeUser("admin"), makeUser("crew")]);
  const s = await ok(createSensor(null, { label: "Tripod scanner", serial: `FH-${uid()}`, kind: "pulsed", wavelengthNm: 1550, appliesAirCorrection: true, toleranceMm: 3, tolerancePpm: 0 }));
  const site = await ok(createSite(null, { name: `Range ${uid()}`, targets: [{ label: "T1", reflectancePct: 50 }] }));
  const p = await ok(createProject(null, { id: `prj-${uid()}`, name: "Valley road", sensorIds: [s.body.id], siteIds: [site.body.id] }));
  expect(p.status).toBe(201);
  const projectId = p.body.id;
  await addMemberUsers(projectId, [crew]); // issue 14
  const sessionId = uid();
  const shotId = uid();
  await ingestSync(crew, {
    deviceId: "tablet-3",
    sessions: [{ id: sessionId, sensorId: s.body.id, siteId: site.body.id, projectId, startedAt: "2026-05-05T09:00:00+02:00", airTempC: 15, pressureHpa: 1010, humidityPct: 50 }],
    shots: [{ id: shotId, sessionId, takenAt: "2026-05-05T09:05:00+02:00", reference: { method: "edm", distanceM: 20 }, readings: { rangesM: [20.004] }, reflectancePct: 50, illuminanceKlux: 20 }],
  });
  expect((await getDb().select().from(shots).where(eq(shots.id, shotId)))[0]!.limitMm).toBeCloseTo(6, 9); // 2 × 3 mm
  const edit = await run(
    projectEdit.action as Fn,
    req(
      `/admin/projects/${projectId}`,
      admin,
      form({ name: "Valley road", minShots: "20", coverageK: "1", minWithinPct: "95", rangeBandEdgesM: "0, 10, 30, 100", sensorIds: [s.body.id], siteIds: [site.body.id] }),
    ),
    { projectId },
  );
  expect(edit.status).toBe(302);
  expect((await getDb().select().from(shots).where(eq(shots.id, shotId)))[0]!.limitMm).toBeCloseTo(3, 9); // 1 × 3 mm
  expect((await getProjectRule(projectId)).coverageK).toBe(1);

  expect((await run(projectEdit.action as Fn, req(`/admin/projects/${projectId}`, admin, form({ intent: "retire", confirm: "yes" })), { projectId })).status).toBe(302);
  expect((await getProject(projectId))!.retiredAt).not.toBeNull();
  expect((await getProjectRule(projectId)).coverageK).toBe(1);
});
