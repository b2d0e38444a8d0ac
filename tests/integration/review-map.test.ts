// Pure parts of the map and the matrix: the offline style, the hexagon bins (turf), the
// diverging colour scale, the SDF triangle, and the reflectance × illuminance cells.
import { expect, test } from "vitest";
import type { FeatureCollection, Point } from "geojson";
import { area, booleanPointInPolygon, point } from "@turf/turf";
import { autoCellSideM, colourStops, DIVERGING, hexBins, offlineStyle, scaleMaxMm, triangleSdf } from "~/components/review/map-style";
import { matrixCells, worstCell } from "~/components/review/matrix";
import type { ReportShotRow, ShotDetail } from "~/components/review/types";

const shotsFc = (pts: [number, number, number, boolean][]): FeatureCollection<Point> => ({
  type: "FeatureCollection",
  features: pts.map(([lon, lat, e, within], i) => ({ type: "Feature", geometry: { type: "Point", coordinates: [lon, lat] }, properties: { id: `s${i}`, errorMm: e, within, outside: within ? 0 : 1 } })),
});

test("the offline style has no network source, glyphs or sprite", () => {
  const empty = { type: "FeatureCollection", features: [] } as FeatureCollection;
  const style = offlineStyle({ outline: empty, stations: empty, targets: empty, shots: empty, hexes: empty }, 10, { bg: "#fff", fg: "#000", muted: "#444", accent: "#00f" }, false);
  expect(JSON.stringify(style)).not.toMatch(/https?:|glyphs|sprite/);
  expect(Object.values(style.sources).every((s) => s.type === "geojson")).toBe(true);
  expect(style.layers[0]).toMatchObject({ type: "background" });
  const ids = style.layers.map((l) => l.id);
  for (const id of ["site-fill", "site-line", "stations", "targets", "shots-within", "shots-outside", "hex-fill"]) expect(ids).toContain(id);
});

test("the colour scale is symmetric around zero and ends on a round number of mm at or above the largest limit", () => {
  expect(scaleMaxMm([10.4, 11.4, 7])).toBe(20);
  expect(scaleMaxMm([6.5])).toBe(10);
  expect(scaleMaxMm([2.2])).toBe(2.5);
  expect(scaleMaxMm([])).toBe(5);
  const stops = colourStops(10);
  expect(stops[0]).toBe(-10);
  expect(stops[stops.length - 2]).toBe(10);
  expect(stops[(DIVERGING.length - 1)]).toBe(0); // the middle colour sits at 0 mm
});

test("hexagon bins count the shots inside them and average their errors", () => {
  // two clusters ~200 m apart: 3 shots near (0,0), 2 shots near (0.002, 0)
  const fc = shotsFc([
    [0, 0, 2, true],
    [0.00001, 0.00001, 4, true],
    [0.00002, 0, 12, false],
    [0.002, 0, -3, true],
    [0.00201, 0.00001, -5, false],
  ]);
  const bins = hexBins(fc, 20);
  expect(bins.features.reduce((n, f) => n + f.properties.n, 0)).toBe(5);
  // each bin holds exactly the shots inside it (checked point by point with turf), averaged
  for (const hex of bins.features) {
    const inside = fc.features.filter((f) => booleanPointInPolygon(f, hex));
    expect(hex.properties.n).toBe(inside.length);
    expect(hex.properties.meanErrorMm).toBeCloseTo(inside.reduce((s, f) => s + (f.properties!.errorMm as number), 0) / inside.length, 9);
    expect(hex.properties.outside).toBe(inside.filter((f) => !f.properties!.within).length);
  }
  // the two clusters 220 m apart never share a bin
  const west = bins.features.filter((h) => fc.features.slice(0, 3).some((f) => booleanPointInPolygon(f, h)));
  const east = bins.features.filter((h) => fc.features.slice(3).some((f) => booleanPointInPolygon(f, h)));
  expect(west.some((h) => east.includes(h))).toBe(false);
  const a = bins.features[0]!;
  // a hexagon of side s has area 3√3/2 · s²
  expect(area(a)).toBeCloseTo((3 * Math.sqrt(3) * 20 * 20) / 2, -1);
  expect(autoCellSideM(fc)).toBeGreaterThanOrEqual(2);
});

test("the SDF triangle is opaque inside (above the 0.75 edge) and empty far outside", () => {
  const t = triangleSdf(48);
  const alpha = (x: number, y: number) => t.data[(y * 48 + x) * 4 + 3]!;
  expect(alpha(24, 30)).toBeGreaterThan(191);
  expect(alpha(1, 1)).toBe(0);
  expect(alpha(24, 7)).toBeLessThan(200); // near the apex edge
});

test("the matrix groups included shots by reflectance class and illuminance band and names the worst cell", () => {
  const row = (id: string, e: number, within = true, excluded = false): ReportShotRow => ({ id, takenAt: "", sessionId: "s", referenceM: 10, rangeM: 10, errorMm: e, limitMm: 12, within, repeatabilityMm: null, excluded, flags: [] });
  const det = (id: string, refl: number, klux: number): ShotDetail => ({ id, reflectancePct: refl, retro: false, illuminanceKlux: klux, targetLabel: null, photoIds: [], exclusionReason: null, note: null });
  const rows = [row("a", 18, false), row("b", 16, false), row("c", 17, false), row("d", 1), row("e", -1), row("f", 0.5), row("g", 40, false, true)];
  const details = new Map([det("a", 10, 85), det("b", 10, 90), det("c", 12, 60), det("d", 85, 85), det("e", 85, 5), det("f", 50, 5), det("g", 10, 85)].map((d) => [d.id, d]));
  const cells = matrixCells(rows, details);
  const darkHigh = cells.find((c) => c.reflectance === "dark" && c.illuminance === "high")!;
  expect(darkHigh).toEqual({ reflectance: "dark", illuminance: "high", n: 3, biasMm: 17, outside: 3 }); // the excluded shot g is left out
  expect(cells.reduce((n, c) => n + c.n, 0)).toBe(6);
  expect(worstCell(cells)).toBe(darkHigh);
  expect(worstCell(cells, 4)).toBeNull();
});
