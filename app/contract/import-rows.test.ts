// The CSV import preview's row classification (issue 11): ranging.md §9's "mm typed as m?"
// flag (|error| > 1000 mm with a reference above 1 m) and the physics bounds, worded as the
// server words them for POST /api/sync.
import { expect, test } from "vitest";
import { classifyRow, IMPLAUSIBLE_MESSAGE, mapRow, type ImportMapping } from "./import-rows";
import type { SensorSpec } from "~/domain";
import { syncShotSchema } from "~/contract/sync";

const sensor: SensorSpec = { id: "r1", kind: "pulsed", wavelengthNm: 905, modulationHz: [], appliesAirCorrection: true, assumedRefractivity: 0, toleranceMm: 5, tolerancePpm: 10, outdoor: true };
const targets = [{ id: "t-dark", label: "D10", reflectancePct: 10, referenceM: 4.5 }];
const base: ImportMapping = { takenAt: "Time", target: "Board", distanceM: "Ref [m]", rangeM: "Range [mm]", _timeOffset: "+02:00" };
const row = (ref: string, range: string) => ({ Time: "2026-05-06 09:00:00", Board: "D10", "Ref [m]": ref, "Range [mm]": range });
const classify = (values: Record<string, string>, mapping: ImportMapping, spec: SensorSpec | null = sensor) => classifyRow(mapRow(values, mapping, targets), spec);

test("a millimetre column mapped as metres is implausible, not ready; mapped as mm it is ready", () => {
  // 4503 mm read as 4503 m against a 4.5 m reference: error ≈ 4.5e6 mm
  const asMetres = classify(row("4.500", "4503"), { ...base, _rangeUnit: "m" });
  expect(asMetres).toMatchObject({ kind: "implausible", message: IMPLAUSIBLE_MESSAGE });
  expect(IMPLAUSIBLE_MESSAGE).toBe("implausible — mm typed as m?");
  const asMm = classify(row("4.500", "4503"), { ...base, _rangeUnit: "mm" });
  expect(asMm.kind).toBe("ready");
  expect(asMm.kind === "ready" ? asMm.errorMm : NaN).toBeCloseTo(3, 9);
});

test("ranging.md §9 example: 2.0016 typed for 20.016 m is implausible; a metre or less of reference is never flagged", () => {
  const m: ImportMapping = { ...base, rangeM: "Range [m]", _rangeUnit: "m" };
  const r = (ref: string, range: string) => ({ Time: "2026-05-06 09:00:00", Board: "D10", "Ref [m]": ref, "Range [m]": range });
  expect(classify(r("20.016", "2.0016"), m).kind).toBe("implausible");
  expect(classify(r("20.016", "2.0016"), m, null).kind).toBe("implausible");
  expect(classify(r("1.000", "2.5"), m).kind).toBe("ready");
  expect(classify(r("20.016", "20.9"), m).kind).toBe("ready"); // 884 mm: a bad sensor, not a unit slip
});

test("a reading beyond the physics bounds is an error with the message the sync API gives", () => {
  // 20003 mm typed in a column mapped as metres: 20 km, beyond ranging.md §9's 10 000 m
  const c = classify(row("20.000", "20003"), { ...base, _rangeUnit: "m" });
  expect(c.kind).toBe("error");
  const message = c.kind === "error" ? c.errors.map((e) => e.message) : [];
  // the same record through the sync schema the server validates with
  const server = syncShotSchema.safeParse({
    id: crypto.randomUUID(),
    sessionId: crypto.randomUUID(),
    takenAt: "2026-05-06T09:00:00+02:00",
    reference: { method: "edm", distanceM: 20 },
    readings: { rangesM: [20003] },
    reflectancePct: 10,
    illuminanceKlux: null,
  });
  expect(server.success).toBe(false);
  const serverMessages = server.success ? [] : server.error.issues.map((i) => i.message);
  expect(message).toEqual(serverMessages);
  expect(message).toEqual(["range must be greater than 0 and at most 10000 m"]);
  expect(c.kind === "error" ? c.errors[0]!.field : "").toBe("rangeM");
});

test("a row the ranging core refuses (air out of range) is an error at its path; mapping errors pass through", () => {
  const air = classifyRow(mapRow(row("4.500", "4503"), { ...base, _rangeUnit: "mm" }, targets), sensor, { airTempC: 95 });
  expect(air).toMatchObject({ kind: "error", errors: [{ field: "airTempC" }] });
  const bad = classify(row("4.500", "abc"), { ...base, _rangeUnit: "mm" });
  expect(bad.kind === "error" ? bad.errors.map((e) => e.field) : []).toEqual(["rangeM"]);
});
