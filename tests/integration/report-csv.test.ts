// GET /api/sensors/:id/report.csv: names row, units row, one row per shot; text cells that a
// spreadsheet would run as a formula (= + - @, OWASP "CSV injection") are neutralised with a
// leading ', numbers (negative errors too) stay numbers.
import { beforeAll, expect, test } from "vitest";
import Papa from "papaparse";
import { action as syncAction } from "~/routes/api.sync";
import { loader as csvLoader } from "~/routes/api.sensors.$sensorId.report[.]csv";
import { setRowsPageForTests } from "~/models/reports.server";
import { apiRequest, call, makeSensor, makeSite, makeUser, type TestUser, shareProject } from "../support/registry-fixtures";

let viewer: TestUser;
let sensorId: string;
const shotIds: string[] = [];

beforeAll(async () => {
  const crew = await makeUser("crew");
  viewer = await makeUser("viewer");
  sensorId = (await makeSensor({ label: "Roof scanner R1 / 905" })).id;
  const site = await makeSite({ targets: [{ label: '=HYPERLINK("http://x.invalid")', reflectancePct: 10 }] });
  await shareProject([{ id: sensorId }], [site], [crew, viewer]); // issue 14
  const sessionId = crypto.randomUUID();
  const notes = ["=1+2", "+49 tablet", "-mud on the board", "@SUM(A1)", "plain note"];
  const shots = notes.map((note, i) => {
    const id = crypto.randomUUID();
    shotIds.push(id);
    return {
      id,
      sessionId,
      takenAt: `2026-05-07T10:0${i}:00+02:00`,
      targetId: site.targets[0]!.id,
      reference: { method: "edm", distanceM: 20 },
      readings: { rangesM: [20 - (i + 1) / 1000] }, // errors −1 … −5 mm
      reflectancePct: 10,
      illuminanceKlux: i === 4 ? null : 40,
      note,
    };
  });
  const a = await call(
    syncAction,
    apiRequest("/api/sync", { user: crew, json: { deviceId: "t", sessions: [{ id: sessionId, sensorId, siteId: site.id, startedAt: "2026-05-07T09:55:00+02:00" }], shots } }),
  );
  expect(a.json.results.every((r: { status: string }) => r.status === "accepted")).toBe(true);
});

test("the CSV has a names row, a units row and one row per shot", async () => {
  const a = await call(csvLoader, apiRequest(`/api/sensors/${sensorId}/report.csv`, { user: viewer }), { sensorId });
  expect(a.status).toBe(200);
  expect(a.headers.get("Content-Type")).toBe("text/csv; charset=utf-8");
  expect(a.headers.get("Content-Disposition")).toMatch(/^attachment; filename="report-Roof-scanner-R1-905-shots\.csv"$/);
  const rows = Papa.parse<string[]>(a.text.trim(), { skipEmptyLines: true }).data;
  expect(rows[0]).toEqual([
    "shotId",
    "takenAt",
    "sessionId",
    "target",
    "referenceM",
    "rangeM",
    "errorMm",
    "limitMm",
    "within",
    "repeatabilityMm",
    "reflectancePct",
    "illuminanceKlux",
    "excluded",
    "flags",
    "note",
  ]);
  expect(rows[1]).toEqual(["", "ISO 8601", "", "", "m", "m", "mm", "mm", "yes/no", "mm", "%", "klux", "yes/no", "", ""]);
  expect(rows).toHaveLength(2 + 5);
  expect(rows.slice(2).map((r) => r[0])).toEqual(shotIds);
});

test("the shot table is streamed page by page: pages of 2 give the bytes of one page", async () => {
  const get = async () => (await call(csvLoader, apiRequest(`/api/sensors/${sensorId}/report.csv`, { user: viewer }), { sensorId })).text;
  const whole = await get();
  setRowsPageForTests(2);
  try {
    const paged = await get();
    expect(paged).toBe(whole);
    expect(paged.split("\r\n")).toHaveLength(2 + 5 + 1); // the last line ends with CRLF too
  } finally {
    setRowsPageForTests(null);
  }
});

test("formula-like text is neutralised, negative numbers stay plain numbers", async () => {
  const a = await call(csvLoader, apiRequest(`/api/sensors/${sensorId}/report.csv`, { user: viewer }), { sensorId });
  const rows = Papa.parse<string[]>(a.text.trim(), { skipEmptyLines: true }).data.slice(2);
  const col = (name: string) => Papa.parse<string[]>(a.text.trim()).data[0]!.indexOf(name);
  expect(rows.map((r) => r[col("note")])).toEqual(["'=1+2", "'+49 tablet", "'-mud on the board", "'@SUM(A1)", "plain note"]);
  expect(rows[0]![col("target")]).toBe('\'=HYPERLINK("http://x.invalid")');
  // e = (20 − 0.001 − 20)·1000 = −1 mm …: a number, unquoted, with its minus sign
  rows.forEach((r, i) => {
    expect(Number(r[col("errorMm")])).toBeCloseTo(-(i + 1), 9);
    expect(r[col("errorMm")]!.startsWith("-")).toBe(true);
  });
  expect(a.text).not.toMatch(/'-\d/);
  expect(rows[4]![col("illuminanceKlux")]).toBe(""); // not measured
  expect(rows[0]![col("within")]).toBe("yes");
});

test("part=summary lists the figures and tests with units; unknown sensor 404; sign-in needed", async () => {
  const a = await call(csvLoader, apiRequest(`/api/sensors/${sensorId}/report.csv?part=summary`, { user: viewer }), { sensorId });
  const rows = Papa.parse<string[]>(a.text.trim(), { skipEmptyLines: true }).data;
  expect(rows[0]).toEqual(["figure", "value", "limit", "pass", "unit"]);
  const byName = Object.fromEntries(rows.map((r) => [r[0], r]));
  expect(byName.n![1]).toBe("5");
  expect(Number(byName.biasMm![1])).toBeCloseTo(-3, 9); // mean of −1…−5
  expect(byName.biasMm![4]).toBe("mm");
  expect(byName.verdict![1]).toBe("insufficient");
  expect(byName["test:count"]).toEqual(["test:count", "5", "20", "no", "shots"]);
  expect((await call(csvLoader, apiRequest(`/api/sensors/nope/report.csv`, { user: viewer }), { sensorId: "nope" })).status).toBe(404);
  expect((await call(csvLoader, apiRequest(`/api/sensors/${sensorId}/report.csv`), { sensorId })).status).toBe(401);
});
