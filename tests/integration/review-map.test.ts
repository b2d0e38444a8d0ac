// Pure parts of the map and the matrix: the offline style, the hexagon bins (turf), the
// diverging colour scale, the SDF triangle, and the reflectance × illuminance cells.
import { expect, test } from "vitest";
import type { FeatureCollection, Point } from "geojson";
import { area, booleanPointInPolygon } from "@turf/turf";
import { autoCellSideM, colourStops, DIVERGING, hexBins, offlineStyle, scaleMaxMm, triangleSdf } from "~/components/review/map-style";
import { matrixCells, worstCell } from "~/components/review/matrix";
import { defaultSite, FIT_MAX_ZOOM, siteBounds, siteChoices, type SessionSite } from "~/components/review/map-sites";
import type { ReportShotRow, ShotDetail } from "~/components/review/types";

const shotsFc = (pts: [number, number, number, boolean][]): FeatureCollection<Point> => ({
  type: "FeatureCollection",
  features: pts.map(([lon, lat, e, within], i) => ({
    type: "Feature",
    geometry: { type: "Point", coordinates: [lon, lat] },
    properties: { id: `s${i}`, errorMm: e, within, outside: within ? 0 : 1 },
  })),
});

test("the offline style has no network source, glyphs or sprite", () => {
  const empty = { type: "FeatureCollection", features: [] } as FeatureCollection;
  const style = offlineStyle({ outline: empty, stations: empty, targets: empty, shots: empty, hexes: empty }, 10, { bg: "#fff", fg: "#000", muted: "#444", accent: "#00f" }, false);
  expect(JSON.stringify(style)).not.toMatch(/https?:|glyphs|sprite/);
  expect(Object.values(style.sources).every((s) => s.type === "geojson")).toBe(true);
  expect(style.layers[0]).toMatchObject({ type: "background" });
  const ids = style.layers.map((l) => l.id);
  for (const id of ["site-fill", "site-line", "stations", "targets", "shots-within", "shots-outside", "hex-fill"]) expect(ids).toContain(id);
  // shots are drawn over the stations and targets they sit on
  expect(ids.indexOf("shots-within")).toBeGreaterThan(ids.indexOf("targets"));
  expect(ids.indexOf("shots-within")).toBeGreaterThan(ids.indexOf("stations"));
});

test("the colour scale is symmetric around zero and ends on a round number of mm at or above the largest limit", () => {
  expect(scaleMaxMm([10.4, 11.4, 7])).toBe(20);
  expect(scaleMaxMm([6.5])).toBe(10);
  expect(scaleMaxMm([2.2])).toBe(2.5);
  expect(scaleMaxMm([])).toBe(5);
  const stops = colourStops(10);
  expect(stops[0]).toBe(-10);
  expect(stops[stops.length - 2]).toBe(10);
  expect(stops[DIVERGING.length - 1]).toBe(0); // the middle colour sits at 0 mm
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
  const row = (id: string, e: number, within = true, excluded = false): ReportShotRow => ({
    id,
    takenAt: "",
    sessionId: "s",
    referenceM: 10,
    rangeM: 10,
    errorMm: e,
    limitMm: 12,
    within,
    repeatabilityMm: null,
    excluded,
    flags: [],
  });
  const det = (id: string, refl: number, klux: number): ShotDetail => ({
    id,
    reflectancePct: refl,
    retro: false,
    illuminanceKlux: klux,
    targetLabel: null,
    photoIds: [],
    exclusionReason: null,
    note: null,
  });
  const rows = [row("a", 18, false), row("b", 16, false), row("c", 17, false), row("d", 1), row("e", -1), row("f", 0.5), row("g", 40, false, true)];
  const details = new Map([det("a", 10, 85), det("b", 10, 90), det("c", 12, 60), det("d", 85, 85), det("e", 85, 5), det("f", 50, 5), det("g", 10, 85)].map((d) => [d.id, d]));
  const cells = matrixCells(rows, details);
  const darkHigh = cells.find((c) => c.reflectance === "dark" && c.illuminance === "high")!;
  expect(darkHigh).toEqual({ reflectance: "dark", illuminance: "high", n: 3, biasMm: 17, outside: 3 }); // the excluded shot g is left out
  expect(cells.reduce((n, c) => n + c.n, 0)).toBe(6);
  expect(worstCell(cells)).toBe(darkHigh);
  expect(worstCell(cells, 4)).toBeNull();
});

// Two invented sites about 4.9 km apart (0.066° of longitude at 48.6° N), as in the demo.
const SESSIONS: SessionSite[] = [
  { id: "y1", siteId: "yard", siteName: "Fernhollow yard baseline" },
  { id: "y2", siteId: "yard", siteName: "Fernhollow yard baseline" },
  { id: "r1", siteId: "road", siteName: "Valley road test range" },
  { id: "e1", siteId: "empty", siteName: "Unlocated range" },
];
const pointsFc = (pts: { at: [number, number]; props: Record<string, unknown> }[]): FeatureCollection => ({
  type: "FeatureCollection",
  features: pts.map(({ at, props }) => ({ type: "Feature", geometry: { type: "Point", coordinates: at }, properties: props })),
});
const YARD: [number, number] = [11.4727, 48.6184];
const ROAD: [number, number] = [11.5396, 48.6441];
const off = ([lon, lat]: [number, number], dLon: number, dLat: number): [number, number] => [lon + dLon, lat + dLat];
const geo = pointsFc([
  { at: off(YARD, 0.0001, 0.00002), props: { id: "a", sessionId: "y1" } },
  { at: off(YARD, 0.0003, 0.0001), props: { id: "b", sessionId: "y1" } },
  { at: off(ROAD, 0.0002, -0.0003), props: { id: "c", sessionId: "r1" } },
  { at: off(YARD, 0.0005, 0.0002), props: { id: "d", sessionId: "y2" } },
  { at: off(ROAD, 0.0004, -0.0006), props: { id: "e", sessionId: "r1" } },
  { at: off(YARD, 0, 0), props: { id: "f", sessionId: "gone" } }, // a session this page does not know
]);
const stationsFc = pointsFc([
  { at: YARD, props: { siteId: "yard" } },
  { at: ROAD, props: { siteId: "road" } },
]);
const targetsFc = pointsFc([
  { at: off(YARD, 0.0006, 0.00025), props: { siteId: "yard" } },
  { at: off(ROAD, 0.0014, -0.0011), props: { siteId: "road" } },
]);

test("the site choice lists each site with located shots, counted through the shots' sessions, most first", () => {
  const choices = siteChoices(geo, SESSIONS);
  expect(choices).toEqual([
    { id: "yard", name: "Fernhollow yard baseline", n: 3 },
    { id: "road", name: "Valley road test range", n: 2 },
  ]);
  // a site without located shots is not offered; nor is anything without shots at all
  expect(choices.some((c) => c.id === "empty")).toBe(false);
  expect(siteChoices({ type: "FeatureCollection", features: [] }, SESSIONS)).toEqual([]);
  // equal counts fall back to the name, so the order never flickers
  const tie = siteChoices(
    pointsFc([
      { at: ROAD, props: { sessionId: "r1" } },
      { at: YARD, props: { sessionId: "y1" } },
    ]),
    SESSIONS,
  );
  expect(tie.map((c) => c.name)).toEqual(["Fernhollow yard baseline", "Valley road test range"]);
});

test("the map opens on the site with the most shots, or on the site of the session in the address", () => {
  const choices = siteChoices(geo, SESSIONS);
  expect(defaultSite(choices, SESSIONS, "")).toBe("yard");
  expect(defaultSite(choices, SESSIONS, "r1")).toBe("road");
  expect(defaultSite(choices, SESSIONS, "e1")).toBe("yard"); // that session's site has no located shots
  expect(defaultSite(choices, SESSIONS, "no-such-session")).toBe("yard");
  expect(defaultSite([], SESSIONS, "")).toBe(""); // nothing located: all sites
});

test("the view of one site spans exactly its shots, stations and targets, and all sites span both", () => {
  const parts = { shots: geo, stations: stationsFc, targets: targetsFc };
  // yard: station at YARD (west-south corner), target at +0.0006/+0.00025 (east-north corner)
  const yard = siteBounds("yard", parts, SESSIONS)!;
  expect(yard[0][0]).toBeCloseTo(YARD[0], 12);
  expect(yard[0][1]).toBeCloseTo(YARD[1], 12);
  expect(yard[1][0]).toBeCloseTo(YARD[0] + 0.0006, 12);
  expect(yard[1][1]).toBeCloseTo(YARD[1] + 0.00025, 12);
  // road: station at ROAD (west, north), target +0.0014/−0.0011 (east, south)
  const road = siteBounds("road", parts, SESSIONS)!;
  expect(road).toEqual(
    [
      [ROAD[0], ROAD[1] - 0.0011],
      [ROAD[0] + 0.0014, ROAD[1]],
    ].map(([x, y]) => [expect.closeTo(x!, 12), expect.closeTo(y!, 12)]),
  );
  const all = siteBounds("", parts, SESSIONS)!;
  expect(all[0]).toEqual([YARD[0], YARD[1]]);
  expect(all[1][0]).toBeCloseTo(ROAD[0] + 0.0014, 12);
  expect(all[1][1]).toBeCloseTo(ROAD[1], 12);
  // a site's view holds nothing of the other site, 4.9 km away
  expect(yard[1][0]).toBeLessThan(ROAD[0]);
  expect(siteBounds("nowhere", { shots: geo, stations: { type: "FeatureCollection", features: [] }, targets: { type: "FeatureCollection", features: [] } }, SESSIONS)).toBeNull();
});

test("the zoom limit keeps a lone shot in a view some tens of metres wide", () => {
  // MapLibre's ground resolution with 512-pixel tiles: 2π · 6 378 137 m · cos φ / (512 · 2^z) per pixel
  // (Web Mercator, EPSG:3857 equatorial radius), at the demo latitude on a 700-pixel wide map.
  const mPerPx = (2 * Math.PI * 6_378_137 * Math.cos((48.6 * Math.PI) / 180)) / (512 * 2 ** FIT_MAX_ZOOM);
  const spanM = 700 * mPerPx;
  expect(spanM).toBeGreaterThan(50);
  expect(spanM).toBeLessThan(400);
});
