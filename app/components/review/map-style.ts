// The offline map style (no tiles, no glyphs, no sprites: nothing from the internet) and the
// diverging colour scale of signed range error in mm. Pure, so it is tested without a browser.
import { bbox, collect, featureCollection, hexGrid } from "@turf/turf";
import type { Feature, FeatureCollection, Point, Polygon } from "geojson";
import { mean } from "~/domain";

/** Blue (reads short) — near white (no error) — red (reads long); readable on both themes. */
export const DIVERGING = ["#2166ac", "#67a9cf", "#d1e5f0", "#f7f7f7", "#fddbc7", "#ef8a62", "#b2182b"] as const;

/** A symmetric scale end in mm: the largest limit, so the colour says "how much of the limit". */
export function scaleMaxMm(limits: number[]): number {
  const m = Math.max(0, ...limits.filter((x) => Number.isFinite(x)));
  if (m === 0) return 5;
  const steps = [1, 2, 2.5, 5, 10];
  const p = 10 ** Math.floor(Math.log10(m));
  for (const s of steps) if (s * p >= m) return s * p;
  return 10 * p;
}

/** MapLibre "interpolate" stops from −max to +max over the diverging colours. */
export function colourStops(maxMm: number): (number | string)[] {
  const out: (number | string)[] = [];
  DIVERGING.forEach((c, i) => {
    out.push(-maxMm + (2 * maxMm * i) / (DIVERGING.length - 1), c);
  });
  return out;
}

export function errorColourExpression(maxMm: number, property = "errorMm") {
  return ["interpolate", ["linear"], ["to-number", ["get", property]], ...colourStops(maxMm)];
}

export type HexProps = { n: number; meanErrorMm: number | null; outside: number };

/**
 * Hexagon bins over the shots (turf hexGrid + collect), each with its count, mean error and
 * the number of shots outside their limit; empty hexagons are dropped.
 */
export function hexBins(shots: FeatureCollection<Point>, cellSideM: number): FeatureCollection<Polygon, HexProps> {
  if (shots.features.length === 0) return featureCollection([]) as FeatureCollection<Polygon, HexProps>;
  const [w, s, e, n] = bbox(shots);
  const padDeg = (cellSideM * 2) / 111_320;
  const grid = hexGrid([w - padDeg, s - padDeg, e + padDeg, n + padDeg], cellSideM / 1000, { units: "kilometers" });
  const withErr = collect(grid, shots as FeatureCollection<Point>, "errorMm", "errors");
  const withOut = collect(withErr, shots as FeatureCollection<Point>, "outside", "outs");
  const out: Feature<Polygon, HexProps>[] = [];
  for (const f of withOut.features) {
    const errs = ((f.properties?.errors ?? []) as unknown[]).filter((v): v is number => typeof v === "number");
    if (errs.length === 0) continue;
    const outs = ((f.properties?.outs ?? []) as unknown[]).filter((v) => v === 1).length;
    out.push({ type: "Feature", geometry: f.geometry, properties: { n: errs.length, meanErrorMm: mean(errs), outside: outs } });
  }
  return featureCollection(out);
}

/** A hexagon side that gives about `across` cells over the shots' extent (at least 2 m). */
export function autoCellSideM(shots: FeatureCollection<Point>, across = 18): number {
  if (shots.features.length < 2) return 10;
  const [w, s, e, n] = bbox(shots);
  const midLat = ((s + n) / 2) * (Math.PI / 180);
  const widthM = Math.max((e - w) * 111_320 * Math.cos(midLat), (n - s) * 110_540);
  return Math.max(2, Math.round(widthM / across));
}

export type StyleSources = {
  outline: FeatureCollection;
  stations: FeatureCollection;
  targets: FeatureCollection;
  shots: FeatureCollection;
  hexes: FeatureCollection;
};

export type Palette = { bg: string; fg: string; muted: string; accent: string };

/** Our layers, over a plain background or a basemap's own layers. */
export function overlayLayers(maxMm: number, c: Palette, showHex: boolean) {
  const colour = errorColourExpression(maxMm);
  return [
    { id: "site-fill", type: "fill", source: "site", paint: { "fill-color": c.accent, "fill-opacity": 0.08 } },
    { id: "site-line", type: "line", source: "site", paint: { "line-color": c.accent, "line-width": 2, "line-dasharray": [3, 2] } },
    {
      id: "hex-fill",
      type: "fill",
      source: "hexes",
      layout: { visibility: showHex ? "visible" : "none" },
      paint: { "fill-color": errorColourExpression(maxMm, "meanErrorMm"), "fill-opacity": 0.85, "fill-outline-color": c.fg },
    },
    // Stations and targets under the shots: shots sit on their targets, and the shots are what is judged.
    { id: "targets", type: "circle", source: "targets", paint: { "circle-radius": 6, "circle-color": c.accent, "circle-stroke-color": c.bg, "circle-stroke-width": 2 } },
    { id: "stations", type: "circle", source: "stations", paint: { "circle-radius": 9, "circle-color": c.bg, "circle-stroke-color": c.fg, "circle-stroke-width": 4 } },
    {
      id: "shots-within",
      type: "circle",
      source: "shots",
      filter: ["==", ["get", "within"], true],
      layout: { visibility: showHex ? "none" : "visible" },
      paint: { "circle-radius": 7, "circle-color": colour, "circle-stroke-color": "#1a1a1a", "circle-stroke-width": 1.5 },
    },
    {
      id: "shots-outside",
      type: "symbol",
      source: "shots",
      filter: ["!=", ["get", "within"], true],
      layout: { visibility: showHex ? "none" : "visible", "icon-image": "triangle-sdf", "icon-size": 0.6, "icon-allow-overlap": true, "icon-ignore-placement": true },
      paint: { "icon-color": colour, "icon-halo-color": c.fg, "icon-halo-width": 2 },
    },
  ];
}

export function geojsonSources(s: StyleSources) {
  return {
    site: { type: "geojson", data: s.outline },
    stations: { type: "geojson", data: s.stations },
    targets: { type: "geojson", data: s.targets },
    shots: { type: "geojson", data: s.shots },
    hexes: { type: "geojson", data: s.hexes },
  };
}

/** A complete style that needs no network at all. */
export function offlineStyle(s: StyleSources, maxMm: number, c: Palette, showHex: boolean) {
  return {
    version: 8 as const,
    name: "Shotbook offline",
    sources: geojsonSources(s),
    layers: [{ id: "background", type: "background", paint: { "background-color": c.bg } }, ...overlayLayers(maxMm, c, showHex)],
  };
}

/**
 * An upward triangle as a signed distance field (MapLibre SDF icon: edge at 0.75, 8 px
 * buffer), so one image takes any colour through icon-color.
 */
export function triangleSdf(size = 48): { width: number; height: number; data: Uint8ClampedArray } {
  const data = new Uint8ClampedArray(size * size * 4);
  const pad = 8;
  const A = [size / 2, pad];
  const B = [size - pad, size - pad];
  const C = [pad, size - pad];
  const edges = [
    [A, B],
    [B, C],
    [C, A],
  ] as const;
  for (let y = 0; y < size; y++) {
    for (let x = 0; x < size; x++) {
      let inside = true;
      let dmin = Infinity;
      for (const [p, q] of edges) {
        const ex = q[0]! - p[0]!;
        const ey = q[1]! - p[1]!;
        const cross = ex * (y + 0.5 - p[1]!) - ey * (x + 0.5 - p[0]!);
        if (cross < 0) inside = false;
        const t = Math.max(0, Math.min(1, ((x + 0.5 - p[0]!) * ex + (y + 0.5 - p[1]!) * ey) / (ex * ex + ey * ey)));
        const dx = x + 0.5 - (p[0]! + t * ex);
        const dy = y + 0.5 - (p[1]! + t * ey);
        dmin = Math.min(dmin, Math.hypot(dx, dy));
      }
      const signedD = inside ? -dmin : dmin;
      const v = 255 * (0.75 - signedD / pad);
      const i = (y * size + x) * 4;
      data[i] = data[i + 1] = data[i + 2] = 0;
      data[i + 3] = Math.max(0, Math.min(255, v));
    }
  }
  return { width: size, height: size, data };
}
