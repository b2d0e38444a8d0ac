// CSV import: the row mapping (pure, shared with the browser's preview) and the chunk route
// through the real ingest, with the mapping remembered per sensor and idempotent re-imports.
import { beforeAll, expect, test } from "vitest";
import { eq, inArray } from "drizzle-orm";
import Papa from "papaparse";
import { getDb } from "~/db/client.server";
import { importMappings, shots } from "~/db/schema";
import * as importPage from "~/routes/review.import";
import * as chunkRoute from "~/routes/review.import.chunk";
import { guessMapping, mapRow, parseNumber, parseTime, type ImportMapping } from "~/components/review/import-rows";
import { apiRequest, call, makeSensor, makeSite, makeUser, type TestUser, shareProject } from "../support/registry-fixtures";

let crew: TestUser;
let viewer: TestUser;
let sensor: Awaited<ReturnType<typeof makeSensor>>;
let site: Awaited<ReturnType<typeof makeSite>>;

beforeAll(async () => {
  [crew, viewer] = await Promise.all([makeUser("crew"), makeUser("viewer")]);
  sensor = await makeSensor({ label: "Depth camera DC-3", kind: "pulsed", appliesAirCorrection: true, toleranceMm: 8, tolerancePpm: 0 });
  site = await makeSite({
    name: "Roadside test range",
    targets: [
      { label: "D10", reflectancePct: 10, referenceM: 12.5 },
      { label: "W85", reflectancePct: 85 },
    ],
  });
  await shareProject([sensor], [site], [crew, viewer]); // issue 14
});

// A sensor's own export, invented: its headers, a decimal comma in one row, mm ranges.
const CSV = [
  "Timestamp;Board;Ref dist [m];Range [mm];Lux [klux];Comment",
  "2026-05-06 09:00:00;D10;;12504;62;",
  "2026-05-06 09:00:10;W85;20,000;20003;62;",
  "2026-05-06 09:00:20;W85;30.000;30001.5;63;edge of the board",
  "not a time;W85;30.000;30001;63;",
  "2026-05-06 09:00:40;Q99;30.000;30001;63;",
  "2026-05-06 09:00:50;W85;;30001;63;",
  "2026-05-06 09:01:00;W85;40.000;abc;63;",
].join("\n");

const MAPPING: ImportMapping = {
  takenAt: "Timestamp",
  target: "Board",
  distanceM: "Ref dist [m]",
  rangeM: "Range [mm]",
  illuminanceKlux: "Lux [klux]",
  note: "Comment",
  _rangeUnit: "mm",
  _timeOffset: "+02:00",
};

function parsed() {
  const r = Papa.parse<Record<string, string>>(CSV, { header: true, skipEmptyLines: true, delimiter: "" });
  return r.data;
}

test("numbers and times read the way sensor exports write them", () => {
  expect(parseNumber("25,011")).toBe(25.011);
  expect(parseNumber(" 1.5e3 ")).toBe(1500);
  expect(parseNumber("")).toBeNull();
  expect(parseNumber("12 m")).toBeNaN();
  expect(parseTime("2026-05-06 09:00:00", "+02:00")).toBe("2026-05-06T09:00:00+02:00");
  expect(parseTime("2026-05-06T07:00Z")).toBe("2026-05-06T07:00:00Z");
  expect(parseTime("2026-05-06T09:00:00+0200")).toBe("2026-05-06T09:00:00+02:00");
  expect(parseTime("06/05/2026")).toBeNull();
});

test("each row maps to a shot or lists every problem it has", () => {
  const rows = parsed();
  expect(rows).toHaveLength(7);
  const targets = site.targets.map((t) => ({ id: t.id, label: t.label, reflectancePct: t.reflectancePct, referenceM: t.referenceM }));
  const out = rows.map((r) => mapRow(r, MAPPING, targets));
  const [a, b, c, d, e, f, g] = out;
  // row 1: no distance in the file, the target's surveyed 12.5 m is used; 12504 mm → 12.504 m
  expect(a).toMatchObject({
    ok: true,
    shot: { reference: { method: "edm", distanceM: 12.5 }, readings: { rangesM: [12.504] }, reflectancePct: 10, illuminanceKlux: 62, takenAt: "2026-05-06T09:00:00+02:00" },
  });
  expect(b).toMatchObject({ ok: true, shot: { reference: { distanceM: 20 }, reflectancePct: 85 } });
  expect(c).toMatchObject({ ok: true, shot: { note: "edge of the board" } });
  expect(d.ok ? [] : d.errors.map((x) => x.field)).toEqual(["takenAt"]);
  expect(e.ok ? [] : e.errors.map((x) => x.message).join()).toMatch(/Q99/);
  expect(f.ok ? [] : f.errors.map((x) => x.message).join()).toMatch(/W85.*no surveyed distance/);
  expect(g.ok ? [] : g.errors.map((x) => x.message).join()).toMatch(/“abc” is not a number/);
});

test("a first mapping is guessed from the headers", () => {
  const m = guessMapping(["Timestamp", "Board", "Ref dist [m]", "Range [mm]", "Lux [klux]", "Comment"]);
  expect(m).toMatchObject({ takenAt: "Timestamp", target: "Board", distanceM: "Ref dist [m]", rangeM: "Range [mm]", illuminanceKlux: "Lux [klux]", note: "Comment" });
});

function chunk(user: TestUser | null, rows: { row: number; id: string; values: Record<string, string> }[], sessionId: string) {
  return call(
    chunkRoute.action as never,
    apiRequest("/review/import/chunk", {
      user: user ?? undefined,
      method: "POST",
      json: { sensorId: sensor.id, siteId: site.id, deviceId: "csv-import:test", session: { id: sessionId, startedAt: "2026-05-06T09:00:00+02:00", airTempC: 16 }, mapping: MAPPING, rows },
    }),
  );
}

test("importing a file of good and bad rows stores the good ones through the ingest, answers per row and remembers the mapping", async () => {
  const sessionId = crypto.randomUUID();
  const rows = parsed().map((values, i) => ({ row: i + 2, id: crypto.randomUUID(), values }));
  const r = await chunk(crew, rows, sessionId);
  expect(r.status).toBe(200);
  expect(r.json.session.status).toBe("accepted");
  const byRow = Object.fromEntries((r.json.rows as { row: number; status: string; errors: { field: string }[] }[]).map((x) => [x.row, x]));
  expect([2, 3, 4].map((n) => byRow[n].status)).toEqual(["accepted", "accepted", "accepted"]);
  expect([5, 6, 7, 8].map((n) => byRow[n].status)).toEqual(["rejected", "rejected", "rejected", "rejected"]);
  expect(byRow[5].errors[0].field).toBe("takenAt");

  const stored = await getDb()
    .select({ id: shots.id, errorMm: shots.errorMm, referenceM: shots.referenceM, syncedBy: shots.syncedBy })
    .from(shots)
    .where(
      inArray(
        shots.id,
        rows.map((x) => x.id),
      ),
    );
  expect(stored).toHaveLength(3);
  const first = stored.find((s) => s.id === rows[0]!.id)!;
  // 12.504 m read against the target's 12.5 m: +4 mm (the sensor corrects for air itself)
  expect(first.referenceM).toBe(12.5);
  expect(first.errorMm).toBeCloseTo(4, 6);
  expect(first.syncedBy).toBe(crew.id);

  const [m] = await getDb().select().from(importMappings).where(eq(importMappings.sensorId, sensor.id));
  expect(m!.mapping).toMatchObject({ takenAt: "Timestamp", rangeM: "Range [mm]", _rangeUnit: "mm" });
  expect(m!.updatedBy).toBe(crew.id);
  const page = (await importPage.loader({ request: apiRequest("/review/import", { user: crew }), params: {}, context: {} } as never)) as Awaited<ReturnType<typeof importPage.loader>>;
  expect(page.mappings[sensor.id]).toMatchObject({ target: "Board" });
  expect(
    page.sites
      .find((s) => s.id === site.id)!
      .targets.map((t) => t.label)
      .sort(),
  ).toEqual(["D10", "W85"]);

  // the same file again: nothing twice
  const again = await chunk(crew, rows, sessionId);
  expect(again.status).toBe(200);
  expect(again.json.session.status).toBe("duplicate");
  expect((again.json.rows as { status: string }[]).filter((x) => x.status === "duplicate")).toHaveLength(3);
  expect(
    await getDb()
      .select({ id: shots.id })
      .from(shots)
      .where(
        inArray(
          shots.id,
          rows.map((x) => x.id),
        ),
      ),
  ).toHaveLength(3);
});

test("the import route: 401 signed out, 403 for a viewer, 400 with field errors for a bad request", async () => {
  const rows = [{ row: 2, id: crypto.randomUUID(), values: parsed()[0]! }];
  expect((await chunk(null, rows, crypto.randomUUID())).status).toBe(401);
  expect((await chunk(viewer, rows, crypto.randomUUID())).status).toBe(403);
  const bad = await call(chunkRoute.action as never, apiRequest("/review/import/chunk", { user: crew, method: "POST", json: { sensorId: sensor.id, rows: [] } }));
  expect(bad.status).toBe(400);
  expect((bad.json.errors as { field: string }[]).map((e) => e.field)).toEqual(expect.arrayContaining(["siteId", "session", "rows"]));
  const noMap = await call(
    chunkRoute.action as never,
    apiRequest("/review/import/chunk", {
      user: crew,
      method: "POST",
      json: { sensorId: sensor.id, siteId: site.id, session: { id: crypto.randomUUID(), startedAt: "2026-05-06T09:00:00+02:00" }, mapping: {}, rows },
    }),
  );
  expect(noMap.status).toBe(400);
  expect((noMap.json.errors as { field: string }[]).map((e) => e.field)).toEqual(expect.arrayContaining(["mapping.takenAt", "mapping.rangeM"]));
});
