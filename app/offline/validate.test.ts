import { expect, test } from "vitest";
import { fieldKeyOf, fieldLabelOf } from "~/components/field/field-errors";
import { parseList, parseNum } from "~/components/field/inputs";
import { localIso } from "./outbox";
import { previewShot } from "./preview";
import type { RefSensor, SyncShotRecord } from "./types";
import { checkSessionRecord, checkShotRecord } from "./validate";

const shot = (over: Partial<SyncShotRecord> = {}): SyncShotRecord => ({
  id: "7f0c1c9e-2b7a-4d1e-9a51-0b0f6c1d2e3f",
  sessionId: "0b6a8d0e-5c1f-4a9b-8e2d-3c4b5a697887",
  takenAt: "2026-05-04T08:10:00+02:00",
  reference: { method: "edm", distanceM: 40 },
  readings: { rangesM: [40.019] },
  reflectancePct: 85,
  illuminanceKlux: 60,
  ...over,
});

test("a complete shot passes both the form's and the server's schema", () => {
  expect(checkShotRecord(shot())).toEqual([]);
});

test("blank boxes get a plain message on their own field", () => {
  const errors = checkShotRecord(shot({ reference: { method: "edm" }, readings: { rangesM: [] }, reflectancePct: undefined as unknown as number }));
  const byField = Object.fromEntries(errors.map((e) => [fieldKeyOf(e.path), e.message]));
  expect(byField["reference.distanceM"]).toBe("Enter the reference distance (m)");
  expect(byField["readings.rangesM.0"]).toBe("Enter at least one sensor range (m)");
  expect(byField.reflectancePct).toBe("Enter the reflectance (%)");
});

test("a bad second reading is reported on the second range box", () => {
  const errors = checkShotRecord(shot({ readings: { rangesM: [40.01, -1] } }));
  expect(errors.map((e) => e.path)).toEqual(["readings.rangesM.1"]);
  expect(fieldLabelOf(errors[0]!.path)).toBe("Sensor range 2 (m)");
});

test("coordinates need a station, a target and both heights, and no distance", () => {
  const errors = checkShotRecord(shot({ reference: { method: "coordinates" } }));
  expect(errors.map((e) => fieldKeyOf(e.path)).sort()).toEqual(["reference.instrumentHeightM", "reference.stationId", "reference.targetHeightM", "targetId"]);
});

test("the server's own rules apply too: a time without an offset is refused", () => {
  const errors = checkShotRecord(shot({ takenAt: "2026-05-04T08:10:00" }));
  expect(errors).toHaveLength(1);
  expect(errors[0]!.path).toBe("takenAt");
});

test("a session needs its sensor and site; missing air is allowed", () => {
  const base = { id: "0b6a8d0e-5c1f-4a9b-8e2d-3c4b5a697887", sensorId: "s1", siteId: "y1", startedAt: localIso() };
  expect(checkSessionRecord(base)).toEqual([]);
  expect(checkSessionRecord({ ...base, sensorId: "" }).map((e) => e.path)).toEqual(["sensorId"]);
  expect(checkSessionRecord({ ...base, pressureHpa: 200 }).map((e) => e.path)).toEqual(["pressureHpa"]);
});

test("server paths map to the form's fields", () => {
  expect(fieldKeyOf("reference.tape.tensionN")).toBe("reference.tape.tensionN");
  expect(fieldKeyOf("readings.phase.1.samples.3")).toBe("readings.phase.1");
  expect(fieldKeyOf("targetId")).toBe("targetId");
  expect(fieldKeyOf("sessionId")).toBe("form");
});

test("numbers typed with a decimal comma or a point mean the same", () => {
  expect(parseNum("25,004")).toBe(25.004);
  expect(parseNum(" 25.004 ")).toBe(25.004);
  expect(parseNum("")).toBeUndefined();
  expect(Number.isNaN(parseNum("25 m"))).toBe(true);
  expect(parseList("0.1, 0.5 -0.2\n0.3")).toEqual([0.1, 0.5, -0.2, 0.3]);
});

test("times carry the tablet's own offset and mean the same instant", () => {
  const d = new Date("2026-05-04T06:10:00.250Z");
  const s = localIso(d);
  expect(s).toMatch(/^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3}[+-]\d\d:\d\d$/);
  expect(Date.parse(s)).toBe(d.getTime());
});

test("the instant check: limit k·(a + b·D) and the error in mm", () => {
  // Tolerance ±(a mm + b ppm × D) as makers state it (ISO 17123-4 form): 5 mm + 10 ppm at 40 m
  // is 5.4 mm; with k = 2 the limit is 10.8 mm. 40.019 m read against 40 m is 19 mm long.
  const sensor: RefSensor = {
    id: "s1",
    label: "Roof scanner",
    serial: "FX-1",
    calibrationDue: null,
    kind: "pulsed",
    wavelengthNm: 905,
    modulationHz: [],
    appliesAirCorrection: true,
    assumedRefractivity: 0,
    toleranceMm: 5,
    tolerancePpm: 10,
    outdoor: true,
  };
  const session = { id: "x", sensorId: "s1", siteId: "y1", startedAt: localIso() };
  const r = previewShot(session, shot(), { sensor, site: undefined, tapes: [], project: undefined });
  expect(r.ok).toBe(true);
  if (!r.ok) return;
  expect(r.preview.limitMm).toBeCloseTo(10.8, 9);
  expect(r.preview.errorMm).toBeCloseTo(19, 6);
  expect(r.preview.within).toBe(false);
  expect(r.preview.airDefaulted.sort()).toEqual(["airTempC", "humidityPct", "pressureHpa"]);
});
