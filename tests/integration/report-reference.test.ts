// ranging.md §7 through the real sync and report routes (issue 15): u_ref per shot from the
// shot itself, a tape's certificate, surveyed points' σ, a named reference EDM and the
// project's EDM figures; unknown stays null. Every expected figure is worked out HERE by hand
// from the definitions (never by calling app/domain); t quantiles from jstat (outside library).
import { beforeAll, expect, test } from "vitest";
import jStat from "jstat";
import { action as syncAction } from "~/routes/api.sync";
import { action as edmAction } from "~/routes/api.edms";
import { loader as reportLoader } from "~/routes/api.sensors.$sensorId.report";
import { addMemberIds, apiRequest, call, makeProject, makeSensor, makeSite, makeTape, makeUser, type TestUser } from "../support/registry-fixtures";
import { getDb } from "~/db/client.server";
import { projectEdms } from "~/db/schema";

const J = jStat as { studentt: { inv(p: number, df: number): number } };

let crew: TestUser;
let admin: TestUser;
let viewer: TestUser;
let sensorId: string;
let projectId: string;
let tapeId: string;
let edmId: string;
const A = crypto.randomUUID();
const B = crypto.randomUUID();

// [session, D (m), error (mm), expected u_ref (mm) | null, how]
type Row = { ses: string; D: number; e: number; u: number | null; how: string };
const rows: Row[] = [];

beforeAll(async () => {
  [crew, admin, viewer] = await Promise.all([makeUser("crew"), makeUser("admin"), makeUser("viewer")]);
  const sensor = await makeSensor({
    label: "Reference check scanner",
    toleranceMm: 5,
    tolerancePpm: 10,
    laserClass: "1M",
    certNumber: "FG-CAL-0193",
    certLaboratory: "Fernhollow calibration bench",
    certIssued: "2025-05-04",
    certDue: "2026-05-04", // valid on A (that very day), past due on B (the day after)
  });
  sensorId = sensor.id;
  const tape = await makeTape({ uncertaintyMm: 0.5, uncertaintyPpm: 20, certNumber: "T-77", certLaboratory: "Tape lab", certIssued: "2024-01-10", certDue: "2026-05-04" });
  tapeId = tape.id;
  const site = await makeSite({
    stations: [{ label: "S1", grid: { e: 1000, n: 2000, h: 100 }, sigmaMm: 3 }],
    targets: [
      { label: "T30", reflectancePct: 50, grid: { e: 1030, n: 2000, h: 100 }, sigmaMm: 4 },
      { label: "T40", reflectancePct: 50, grid: { e: 1000, n: 2040, h: 100 } }, // no σ: unknown
    ],
  });
  const project = await makeProject({
    sensorIds: [sensorId],
    siteIds: [site.id],
    tapeIds: [tapeId],
    minShots: 3,
    statement: "nssda95",
    edmUncertaintyMm: 2,
    edmUncertaintyPpm: 1,
    memberIds: [crew.id, viewer.id],
  });
  projectId = project.id;
  await addMemberIds(projectId, viewer.id); // api.md v1.1: a member sees the project's sessions
  const edm = await call(
    edmAction,
    apiRequest("/api/edms", {
      user: admin,
      json: {
        label: "Total station TS-2",
        serial: "TS2-4471",
        uncertaintyMm: 1,
        uncertaintyPpm: 2,
        certificate: { number: "E-12", laboratory: "Survey lab", issued: "2026-01-05", due: "2027-01-05" },
      },
    }),
  );
  expect(edm.status).toBe(201);
  edmId = edm.json.id;
  await getDb().insert(projectEdms).values({ projectId, edmId }); // issue 14: the project's crews may name it

  const sessions = [
    { id: A, sensorId, siteId: site.id, projectId, startedAt: "2026-05-04T08:00:00+02:00", airTempC: 15, pressureHpa: 1010, humidityPct: 60 },
    { id: B, sensorId, siteId: site.id, projectId, startedAt: "2026-05-05T08:00:00+02:00", airTempC: 15, pressureHpa: 1010, humidityPct: 60 },
  ];
  const tapeUse = { tapeId, tempC: 20, tensionN: 50, support: "ground", spans: 1 }; // standard conditions: D = L
  const shot = (ses: string, i: number, D: number, e: number, reference: Record<string, unknown>, u: number | null, how: string, targetId?: string) => {
    rows.push({ ses, D, e, u, how });
    return {
      id: crypto.randomUUID(),
      sessionId: ses,
      takenAt: `${ses === A ? "2026-05-04" : "2026-05-05"}T09:${String(10 + i).padStart(2, "0")}:00+02:00`,
      ...(targetId ? { targetId } : {}),
      reference,
      readings: { rangesM: [D + e / 1000] },
      reflectancePct: 50,
      illuminanceKlux: 20,
    };
  };
  const t30 = site.targets[0]!.id;
  const t40 = site.targets[1]!.id;
  const st = site.stations[0]!.id;
  const shots = [
    // the shot's own figure wins over the tape's: 0.3 mm
    shot(A, 0, 40, 1.0, { method: "tape", distanceM: 40, tape: tapeUse, uncertaintyMm: 0.3 }, 0.3, "explicit"),
    // surveyed points: √(3² + 4²) = 5 mm
    shot(A, 1, 30, -2.0, { method: "coordinates", stationId: st, instrumentHeightM: 0, targetHeightM: 0 }, 5, "coordinates σ", t30),
    // named EDM: 1 + 2 × 50/1000 = 1.1 mm
    shot(A, 2, 50, 1.5, { method: "edm", distanceM: 50, edmId }, 1.1, "named EDM"),
    // EDM from the project's rule: 2 + 1 × 80/1000 = 2.08 mm
    shot(A, 3, 80, 0.5, { method: "edm", distanceM: 80 }, 2.08, "rule EDM"),
    // tape certificate: 0.5 + 20 × 25/1000 = 1.0 mm
    shot(B, 4, 25, -1.0, { method: "tape", distanceM: 25, tape: tapeUse }, 1.0, "tape certificate"),
    // target without σ: unknown
    shot(B, 5, 40, 2.0, { method: "coordinates", stationId: st, instrumentHeightM: 0, targetHeightM: 0 }, null, "unknown", t40),
  ];
  const s = await call(syncAction, apiRequest("/api/sync", { user: crew, json: { deviceId: "tablet-9", sessions, shots } }));
  expect(s.json.results.map((r: { status: string; errors?: unknown }) => [r.status, r.errors ?? null])).toEqual(Array(8).fill(["accepted", null]));
});

const report = (query = "") => call(reportLoader, apiRequest(`/api/sensors/${sensorId}/report${query}`, { user: viewer }), { sensorId });
const rms = (x: number[]) => Math.sqrt(x.reduce((s, v) => s + v * v, 0) / x.length);

test("one unknown u_ref makes the reference figures null and the reference test unknown", async () => {
  const R = (await report()).json;
  expect(R.n).toBe(6);
  expect(R.referenceUnknownN).toBe(1);
  expect(R.referenceRmseMm).toBeNull();
  expect(R.rmseCombinedMm).toBeNull();
  const ref = R.tests.find((t: { name: string }) => t.name === "reference");
  expect(ref.pass).toBeNull();
  expect(ref.value).toBeNull();
  // limit T(D̄)/r with r = 2 (default), D̄ the mean reference distance
  const dMean = rows.reduce((s, r) => s + r.D, 0) / rows.length;
  expect(ref.limit).toBeCloseTo((5 + (10 * dMean) / 1000) / 2, 9);
  // the project's rule judged it, named in the report, with its statement style
  expect(R.ruleProjectId).toBe(projectId);
  expect(R.statement).toBe("nssda95");
  expect(R.rule).toMatchObject({ statement: "nssda95", edmUncertaintyMm: 2, edmUncertaintyPpm: 1, referenceRatio: 2, referenceInVerdict: false });
  expect(R.verdict).toBe("pass"); // advisory: an unknown reference does not change it
});

test("the known sources: explicit, tape certificate, coordinates σ, named EDM and rule EDM, hand-worked", async () => {
  const R = (await report(`?session=${A}`)).json;
  const a = rows.filter((r) => r.ses === A);
  expect(a.map((r) => r.how)).toEqual(["explicit", "coordinates σ", "named EDM", "rule EDM"]);
  // √((0.3² + 5² + 1.1² + 2.08²)/4) = √((0.09 + 25 + 1.21 + 4.3264)/4) = √7.6566 = 2.76706…
  expect(R.referenceUnknownN).toBe(0);
  expect(R.referenceRmseMm).toBeCloseTo(Math.sqrt((0.09 + 25 + 1.21 + 4.3264) / 4), 9);
  expect(R.referenceRmseMm).toBeCloseTo(2.76706, 4);
  const rmse = rms(a.map((r) => r.e));
  expect(R.rmseMm).toBeCloseTo(rmse, 6);
  // quadrature, ASPRS Positional Accuracy Standards Edition 2 (2023)
  expect(R.rmseCombinedMm).toBeCloseTo(Math.sqrt(rmse * rmse + 7.6566), 6);
  const ref = R.tests.find((t: { name: string }) => t.name === "reference");
  const dMean = a.reduce((s, r) => s + r.D, 0) / a.length;
  expect(ref.limit).toBeCloseTo((5 + (10 * dMean) / 1000) / 2, 9);
  expect(ref.pass).toBe(R.referenceRmseMm <= ref.limit);
  const b = (await report(`?session=${B}`)).json;
  expect(b.referenceUnknownN).toBe(1);
});

test("each shot's stored u_ref is the hand-worked one (tape certificate 0.5 + 20 ppm × 25 m = 1.0 mm; no σ → null)", async () => {
  const { getDb } = await import("~/db/client.server");
  const { shots } = await import("~/db/schema");
  const { eq, asc } = await import("drizzle-orm");
  const stored = await getDb().select({ u: shots.referenceUncertaintyMm }).from(shots).where(eq(shots.sensorId, sensorId)).orderBy(asc(shots.takenAt));
  expect(stored).toHaveLength(rows.length);
  stored.forEach((s, i) => {
    const want = rows[i]!.u;
    if (want == null) expect(s.u, rows[i]!.how).toBeNull();
    else expect(s.u, rows[i]!.how).toBeCloseTo(want, 12);
  });
});

test("zero offset t against jstat's t quantile (ν = n − 2)", async () => {
  const R = (await report()).json;
  // OLS e = δ + κ·D by the normal equations, SE(δ) with s² = Σr²/(n − 2)
  const d = rows.map((r) => r.D);
  const e = rows.map((r) => (r.D + r.e / 1000 - r.D) * 1000);
  const n = d.length;
  const dm = d.reduce((s, v) => s + v, 0) / n;
  const em = e.reduce((s, v) => s + v, 0) / n;
  const sxx = d.reduce((s, v) => s + (v - dm) ** 2, 0);
  const slope = d.reduce((s, v, i) => s + (v - dm) * (e[i]! - em), 0) / sxx;
  const icpt = em - slope * dm;
  const s2 = e.reduce((s, v, i) => s + (v - icpt - slope * d[i]!) ** 2, 0) / (n - 2);
  const t = icpt / Math.sqrt(s2 * (1 / n + (dm * dm) / sxx));
  expect(R.zeroOffsetT).toBeCloseTo(t, 6);
  expect(J.studentt.inv(0.975, 4)).toBeCloseTo(2.776, 3); // NIST/SEMATECH t table, 4 df
  expect(R.zeroOffsetSignificant).toBe(Math.abs(t) > J.studentt.inv(0.975, n - 2));
});

test("traceability lists the sensor, the tape and the EDM, with the sessions past due", async () => {
  const R = (await report()).json;
  const by = Object.fromEntries(R.traceability.map((t: { kind: string }) => [t.kind, t]));
  expect(by.sensor).toMatchObject({ kind: "sensor", id: sensorId, number: "FG-CAL-0193", due: "2026-05-04", expiredOnSessions: [B] });
  expect(by.tape).toMatchObject({ kind: "tape", id: tapeId, number: "T-77", due: "2026-05-04", expiredOnSessions: [B] });
  expect(by.edm).toMatchObject({ kind: "edm", id: edmId, number: "E-12", due: "2027-01-05", expiredOnSessions: [] });
  // only session A: the tape was still valid that day; the EDM too
  const a = (await report(`?session=${A}`)).json;
  const aBy = Object.fromEntries(a.traceability.map((t: { kind: string }) => [t.kind, t]));
  expect(aBy.sensor.expiredOnSessions).toEqual([]);
  expect(aBy.tape.expiredOnSessions).toEqual([]);
});

test("a rule with the reference in the verdict holds a pass back when the reference is unknown", async () => {
  const strict = await makeProject({ sensorIds: [], minShots: 3, referenceInVerdict: true, memberIds: [crew.id, viewer.id] });
  const R = (await report(`?project=${strict.id}`)).json;
  expect(R.tests.find((t: { name: string }) => t.name === "reference").pass).toBeNull();
  expect(R.verdict).toBe("insufficient");
  const known = (await report(`?project=${strict.id}&session=${A}`)).json;
  const ref = known.tests.find((t: { name: string }) => t.name === "reference");
  expect(known.verdict).toBe(ref.pass ? "pass" : "insufficient");
});

test("POST /api/edms answers the registry's 201/200/400/409", async () => {
  const body = { id: "edm-fixture-1", label: "Distance meter D1", serial: "D1-9", uncertaintyMm: 1.5, uncertaintyPpm: 1.5 };
  const post = (json: unknown, user: TestUser = admin) => call(edmAction, apiRequest("/api/edms", { user, json }));
  expect((await post(body)).status).toBe(201);
  const again = await post(body);
  expect(again.status).toBe(200);
  expect(again.json.id).toBe("edm-fixture-1");
  expect((await post({ ...body, uncertaintyMm: 3 })).status).toBe(409);
  const bad = await post({ label: "No figures", serial: "X", uncertaintyMm: -1, certificate: { number: "1", laboratory: "L", issued: "2026-02-01", due: "2026-01-01" } });
  expect(bad.status).toBe(400);
  expect(bad.json.errors.map((e: { path: string }) => e.path).sort()).toEqual(["certificate.due", "uncertaintyMm"]);
  expect((await post(body, viewer)).status).toBe(403);
  expect((await call(edmAction, apiRequest("/api/edms", { json: body }))).status).toBe(401);
});

test("a certificate or EDM edit shows in the next report (the report cache's fingerprint covers them)", async () => {
  const { updateTape } = await import("~/models/tapes.server");
  const { updateEdm } = await import("~/models/edms.server");
  const before = (await report(`?session=${A}`)).json;
  expect(before.traceability.find((t: { kind: string }) => t.kind === "tape").due).toBe("2026-05-04");
  const tapeBody = {
    label: "Steel tape 30 m",
    standardTempC: 20,
    standardTensionN: 50,
    areaMm2: 2.6,
    modulusGPa: 200,
    weightNPerM: 0.2,
    calibrationPpm: 0,
    uncertaintyMm: 0.5,
    uncertaintyPpm: 20,
    certificate: { number: "T-78", laboratory: "Tape lab", issued: "2026-04-01", due: "2026-04-30" },
  };
  expect((await updateTape({ id: admin.id }, tapeId, tapeBody)).status).toBe(200);
  const after = (await report(`?session=${A}`)).json;
  const tape = after.traceability.find((t: { kind: string }) => t.kind === "tape");
  expect(tape).toMatchObject({ number: "T-78", due: "2026-04-30", expiredOnSessions: [A] });
  // the named EDM's uncertainty: 4 + 0 × 50 → u = 4 mm on that shot; the sum changes accordingly
  const e = await updateEdm({ id: admin.id }, edmId, {
    label: "Total station TS-2",
    serial: "TS2-4471",
    uncertaintyMm: 4,
    uncertaintyPpm: 0,
    certificate: { number: "E-12", laboratory: "Survey lab", issued: "2026-01-05", due: "2027-01-05" },
  });
  expect(e.status).toBe(200);
  const again = (await report(`?session=${A}`)).json;
  expect(again.referenceRmseMm).toBeCloseTo(Math.sqrt((0.09 + 25 + 16 + 4.3264) / 4), 9);
});
