// The range-error map (MapLibre GL, loaded only by the map page through React.lazy).
// Without a basemap URL the style has no network source at all.
import { useEffect, useRef } from "react";
import { Map as MlMap, NavigationControl, ScaleControl, setWorkerUrl, type GeoJSONSource, type StyleSpecification } from "maplibre-gl";
import workerUrl from "maplibre-gl/dist/maplibre-gl-worker.mjs?url";
import "maplibre-gl/dist/maplibre-gl.css";
import type { FeatureCollection } from "geojson";
import { FIT_MAX_ZOOM, FIT_PADDING_PX, type Bounds } from "./map-sites";
import { errorColourExpression, geojsonSources, offlineStyle, overlayLayers, triangleSdf, type Palette, type StyleSources } from "./map-style";

setWorkerUrl(workerUrl);

export type RangeMapProps = {
  sources: StyleSources;
  maxMm: number;
  showHex: boolean;
  basemapUrl: string | null;
  onSelect: (shotId: string | null) => void;
  /** The view to frame; the map refits whenever `key` changes (a new site, or the shots arrived). */
  frame: { key: string; bounds: Bounds | null };
};

function palette(): Palette {
  const s = getComputedStyle(document.documentElement);
  const v = (n: string) => s.getPropertyValue(n).trim();
  return { bg: v("--bg") || "#fff", fg: v("--fg") || "#000", muted: v("--muted") || "#444", accent: v("--accent") || "#0b4fb3" };
}

const FIT = { padding: FIT_PADDING_PX, maxZoom: FIT_MAX_ZOOM };

export default function RangeMap({ sources, maxMm, showHex, basemapUrl, onSelect, frame }: RangeMapProps) {
  const el = useRef<HTMLDivElement>(null);
  const map = useRef<MlMap | null>(null);
  const ready = useRef(false);
  const latest = useRef({ sources, maxMm, showHex, frame });
  latest.current = { sources, maxMm, showHex, frame };
  const framed = useRef<string | null>(null);
  const selectRef = useRef(onSelect);
  selectRef.current = onSelect;

  /** Puts the latest data, colours and visibility on the map (after load, and on every change). */
  function apply(m: MlMap) {
    const { sources, maxMm, showHex, frame } = latest.current;
    const set = (id: string, data: FeatureCollection) => (m.getSource(id) as GeoJSONSource | undefined)?.setData(data);
    set("shots", sources.shots);
    set("hexes", sources.hexes);
    set("site", sources.outline);
    set("stations", sources.stations);
    set("targets", sources.targets);
    const c = palette();
    for (const l of overlayLayers(maxMm, c, showHex)) {
      if (!m.getLayer(l.id)) continue;
      if ("layout" in l && l.layout && "visibility" in l.layout) m.setLayoutProperty(l.id, "visibility", l.layout.visibility as "visible" | "none");
    }
    if (m.getLayer("shots-within")) {
      m.setPaintProperty("shots-within", "circle-color", errorColourExpression(maxMm) as never);
      m.setPaintProperty("shots-outside", "icon-color", errorColourExpression(maxMm) as never);
      m.setPaintProperty("hex-fill", "fill-color", errorColourExpression(maxMm, "meanErrorMm") as never);
    }
    m.getContainer().setAttribute("data-shots", String(sources.shots.features.length));
    if (framed.current !== frame.key) {
      if (frame.bounds) m.fitBounds(frame.bounds, { ...FIT, animate: false });
      framed.current = frame.key;
      m.getContainer().setAttribute("data-frame", frame.key);
    }
  }

  useEffect(() => {
    if (!el.current) return;
    const c = palette();
    const { sources: s0, maxMm: m0, showHex: h0, frame: f0 } = latest.current;
    const style = basemapUrl ?? (offlineStyle(s0, m0, c, h0) as unknown as StyleSpecification);
    const b = f0.bounds;
    // A new map (first open, or the basemap switched) frames the current choice again on load.
    framed.current = null;
    const m = new MlMap({
      container: el.current,
      style,
      bounds: b ?? undefined,
      fitBoundsOptions: FIT,
      center: b ? undefined : [0, 0],
      zoom: b ? undefined : 1,
      attributionControl: false,
      maxZoom: 22,
    });
    map.current = m;
    m.addControl(new NavigationControl({ showCompass: false }), "top-right");
    m.addControl(new ScaleControl({ unit: "metric" }), "bottom-left");
    // The zoom is written on the element so a browser test can tell a framed site from a framed world.
    m.on("moveend", () => m.getContainer().setAttribute("data-zoom", m.getZoom().toFixed(2)));
    m.on("load", () => {
      if (!m.hasImage("triangle-sdf")) m.addImage("triangle-sdf", triangleSdf(), { sdf: true });
      if (basemapUrl) {
        const { sources: s, maxMm: mm, showHex: h } = latest.current;
        for (const [id, src] of Object.entries(geojsonSources(s))) m.addSource(id, src as never);
        for (const layer of overlayLayers(mm, c, h)) m.addLayer(layer as never);
      }
      ready.current = true;
      apply(m);
      el.current?.setAttribute("data-map-ready", "true");
    });
    const pick = (e: { features?: { properties: Record<string, unknown> }[] }) => {
      const id = e.features?.[0]?.properties?.id;
      selectRef.current(typeof id === "string" ? id : null);
    };
    for (const layer of ["shots-within", "shots-outside"]) {
      m.on("click", layer, pick as never);
      m.on("mouseenter", layer, () => (m.getCanvas().style.cursor = "pointer"));
      m.on("mouseleave", layer, () => (m.getCanvas().style.cursor = ""));
    }
    return () => {
      ready.current = false;
      m.remove();
      map.current = null;
    };
  }, [basemapUrl]);

  useEffect(() => {
    if (map.current && ready.current) apply(map.current);
  }, [sources, maxMm, showHex, frame.key]);

  return <div ref={el} className="h-[62vh] min-h-[420px] w-full rounded-lg border-2 border-line" data-testid="range-map" role="region" aria-label="Range-error map" />;
}
