import { expect, test } from "vitest";
import proj4 from "proj4";
import { referenceDistance, tapeCorrections, tapeSagCorrection, tapeTemperatureCorrection, tapeTensionCorrection } from "./reference.ts";
import { geoChord, geodeticToGeocentric, gridDistance3d, GRS80, WGS84 } from "./geodesy.ts";
import { DomainError } from "./errors.ts";
import type { TapeSpec } from "./types.ts";

test("tape temperature correction, textbook example in feet", () => {
  // Ghilani & Wolf style textbook example: 368.50 ft taped at 22 °F, tape standard at 68 °F,
  // k = 0.0000065/°F → C_T = −0.11 ft (the formula is unit-free: α(T − T_s)L)
  expect(tapeTemperatureCorrection(368.5, 22, 68, 0.0000065)).toBeCloseTo(-0.11, 2);
});

test("tape sag correction, textbook example in feet", () => {
  // Ghilani & Wolf style textbook example: 2.8 lb per 100 ft tape (w = 0.028 lb/ft), 12 lb pull,
  // three full 100 ft spans plus 48.75 ft → −0.71 ft total (C_S = −w²L_s³/(24P²) per span)
  const w = 2.8 / 100;
  const total = 3 * tapeSagCorrection(w, 100, 12) + tapeSagCorrection(w, 48.75, 12);
  expect(total).toBeCloseTo(-0.71, 2);
  expect(tapeSagCorrection(w, 100, 12)).toBeCloseTo(-0.227, 3);
});

test("tape tension correction (P − P_s)L/(AE)", () => {
  // computed here from the definitions: 30 m, 70 N vs 50 N standard, A = 2.5 mm², E = 200 GPa
  // → 20·30/(2.5e-6·200e9) = 1.2 mm
  expect(tapeTensionCorrection(30, 70, 50, 2.5e-6 * 200e9)).toBeCloseTo(0.0012, 12);
});

const tape: TapeSpec = { standardTempC: 20, standardTensionN: 50, areaMm2: 2.5, modulusGPa: 200, weightNPerM: 0.2, calibrationPpm: 30 };

test("tape corrections in metres add up, sag only when hanging", () => {
  // computed here from the definitions of ranging.md §3
  const g = tapeCorrections({ distanceM: 30, tape, tempC: 30, tensionN: 70, support: "ground", spans: 1 });
  expect(g.temperatureM).toBeCloseTo(11.6e-6 * 10 * 30, 12);
  expect(g.tensionM).toBeCloseTo(0.0012, 12);
  expect(g.sagM).toBe(0);
  expect(g.calibrationM).toBeCloseTo(30e-6 * 30, 12);
  expect(g.distanceM).toBeCloseTo(30 + g.temperatureM + g.tensionM + g.calibrationM, 12);
  const e = tapeCorrections({ distanceM: 30, tape, tempC: 20, tensionN: 50, support: "ends", spans: 3 });
  // three spans of 10 m: 3·(−0.2²·10³/(24·50²))
  expect(e.sagM).toBeCloseTo((3 * -(0.04 * 1000)) / (24 * 2500), 12);
  const r = referenceDistance({ method: "tape", distanceM: 30, tape, tempC: 20, tensionN: 50, support: "ends", spans: 3 });
  expect(r.distanceM).toBeCloseTo(30 + e.sagM + e.calibrationM, 12);
  expect(r.tapeCorrectionMm).toBeCloseTo((e.sagM + e.calibrationM) * 1000, 9);
});

test("geocentric coordinates: EPSG Guidance Note 7-2 worked example", () => {
  // IOGP/EPSG Guidance Note 7-2, geographic/geocentric example (WGS 84), values from memory:
  // 53°48′33.820″N, 2°07′46.380″E, h 73.0 m → X 3 771 793.968, Y 140 253.342, Z 5 124 304.349 m
  const p = geodeticToGeocentric({ lat: 53 + 48 / 60 + 33.82 / 3600, lon: 2 + 7 / 60 + 46.38 / 3600, h: 73 }, WGS84);
  expect(p.x).toBeCloseTo(3771793.968, 3);
  expect(p.y).toBeCloseTo(140253.342, 3);
  expect(p.z).toBeCloseTo(5124304.349, 3);
});

test("geocentric coordinates agree with proj4 over several points", () => {
  // proj4 2.22 "+proj=longlat +datum=WGS84" → "+proj=geocent +datum=WGS84"
  const from = "+proj=longlat +datum=WGS84 +no_defs";
  const to = "+proj=geocent +datum=WGS84 +units=m +no_defs";
  const pts = [
    [0, 0, 0],
    [53.809394, 2.12955, 73],
    [-33.8568, 151.2153, 45.2],
    [64.1466, -21.9426, 1200],
    [-89.5, 10, 2800],
    [45, 179.9, -30],
    [10.5, -75.25, 0.5],
  ];
  for (const [lat, lon, h] of pts) {
    const [X, Y, Z] = proj4(from, to, [lon, lat, h]) as number[];
    const p = geodeticToGeocentric({ lat, lon, h });
    expect(Math.abs(p.x - X)).toBeLessThan(1e-3);
    expect(Math.abs(p.y - Y)).toBeLessThan(1e-3);
    expect(Math.abs(p.z - Z)).toBeLessThan(1e-3);
  }
  // GRS80 and WGS 84 differ by ~0.1 mm in semi-minor axis (definitions of both ellipsoids)
  const a = geodeticToGeocentric({ lat: 45, lon: 0, h: 0 }, GRS80);
  const b = geodeticToGeocentric({ lat: 45, lon: 0, h: 0 }, WGS84);
  expect(Math.abs(a.z - b.z)).toBeLessThan(1e-3);
});

test("coordinates: grid 3-D distance with heights, geographic chord, never haversine", () => {
  // computed here: 3-4-12 box → 13 m, the instrument height 1.5 m and target height 0.5 m added to h
  expect(gridDistance3d({ e: 0, n: 0, h: 0 }, { e: 3, n: 4, h: 12 })).toBeCloseTo(13, 12);
  const r = referenceDistance({
    method: "coordinates",
    station: { grid: { e: 100, n: 200, h: 10 } },
    target: { grid: { e: 103, n: 204, h: 21 } },
    instrumentHeightM: 1.5,
    targetHeightM: 0.5,
  });
  expect(r.distanceM).toBeCloseTo(Math.hypot(3, 4, 10), 12);
  // chord between two points 1 km apart on the equator: 2·R·sin(Δλ/2) with R = a (exact on the equator)
  const dl = 1000 / 6378137;
  const c = geoChord({ lat: 0, lon: 0, h: 0 }, { lat: 0, lon: (dl * 180) / Math.PI, h: 0 });
  expect(c).toBeCloseTo(2 * 6378137 * Math.sin(dl / 2), 6);
  expect(c).toBeLessThan(1000); // the chord is shorter than the arc a haversine would give
  const g = referenceDistance({
    method: "coordinates",
    station: { geo: { lat: 50, lon: 8, h: 100 } },
    target: { geo: { lat: 50, lon: 8, h: 100 }, grid: null },
    instrumentHeightM: 0,
    targetHeightM: 25,
  });
  expect(g.distanceM).toBeCloseTo(25, 6); // straight up along the normal
});

test("reference inputs that are impossible throw DomainError with the field path", () => {
  const bad = (r: unknown, path: string) => {
    expect(() => referenceDistance(r as never)).toThrowError(DomainError);
    expect(() => referenceDistance(r as never)).toThrowError(expect.objectContaining({ path }));
  };
  bad({ method: "edm", distanceM: 0 }, "reference.distanceM");
  bad({ method: "edm", distanceM: -4 }, "reference.distanceM");
  bad({ method: "edm", distanceM: NaN }, "reference.distanceM");
  bad({ method: "laser" }, "reference.method");
  bad({ method: "tape", distanceM: 30, tape, tempC: NaN, tensionN: 50, support: "ground", spans: 1 }, "reference.tempC");
  bad({ method: "tape", distanceM: 30, tape, tempC: 20, tensionN: 0, support: "ground", spans: 1 }, "reference.tensionN");
  bad({ method: "tape", distanceM: 30, tape, tempC: 20, tensionN: 50, support: "ends", spans: 0 }, "reference.spans");
  bad({ method: "tape", distanceM: 30, tape, tempC: 20, tensionN: 50, support: "ends", spans: 1.5 }, "reference.spans");
  bad({ method: "tape", distanceM: 30, tape, tempC: 20, tensionN: 50, support: "air", spans: 1 }, "reference.support");
  bad({ method: "tape", distanceM: 30, tape: { ...tape, areaMm2: 0 }, tempC: 20, tensionN: 50, support: "ground", spans: 1 }, "reference.tape.areaMm2");
  bad({ method: "tape", distanceM: 30, tempC: 20, tensionN: 50, support: "ground", spans: 1 }, "reference.tape");
  const st = { grid: { e: 0, n: 0, h: 0 } };
  bad({ method: "coordinates", station: st, target: { geo: { lat: 1, lon: 1, h: 0 } }, instrumentHeightM: 0, targetHeightM: 0 }, "reference");
  bad({ method: "coordinates", station: st, target: {}, instrumentHeightM: 0, targetHeightM: 0 }, "reference.target");
  bad({ method: "coordinates", station: st, target: { grid: { e: 1, n: NaN, h: 0 } }, instrumentHeightM: 0, targetHeightM: 0 }, "reference.target.grid.n");
  bad({ method: "coordinates", station: st, target: { grid: { e: 0, n: 0, h: 0 } }, instrumentHeightM: 0, targetHeightM: 0 }, "reference");
  bad({ method: "coordinates", station: st, target: st, instrumentHeightM: NaN, targetHeightM: 0 }, "reference.instrumentHeightM");
  bad({ method: "coordinates", station: { geo: { lat: 91, lon: 0, h: 0 } }, target: { geo: { lat: 1, lon: 1, h: 0 } }, instrumentHeightM: 0, targetHeightM: 0 }, "reference.station.geo.lat");
});
