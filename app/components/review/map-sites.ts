// Which site each located shot was taken at (through its session), the "Site" choice of the
// map and the view that frames one site. Pure, so it is tested without a browser.
import type { Feature, FeatureCollection, Point } from "geojson";

/**
 * The closest the map zooms when it frames a site. MapLibre's zoom counts 512-pixel tiles, so
 * one pixel is 78 271.5 m · cos φ / 2^z: about 0.1 m at zoom 19 at mid-latitudes, and a
 * 700-pixel map spans some 70 m, the size of a short baseline. A lone shot or a one-target site
 * stops there and shows its surroundings instead of a featureless close-up.
 */
export const FIT_MAX_ZOOM = 19;
/** Screen pixels kept free around the framed shots, stations and targets. */
export const FIT_PADDING_PX = 48;

export type SessionSite = { id: string; siteId: string; siteName: string };
export type SiteChoice = { id: string; name: string; n: number };
export type Bounds = [[number, number], [number, number]];

/** Session id → site id. */
export function sessionSites(sessions: SessionSite[]): Map<string, string> {
  return new Map(sessions.map((s) => [s.id, s.siteId]));
}

/** The site a shot feature was taken at, through its session; null when its session is unknown. */
export function siteOfShot(f: Feature, bySession: Map<string, string>): string | null {
  const sid = f.properties?.sessionId;
  return typeof sid === "string" ? (bySession.get(sid) ?? null) : null;
}

/**
 * The sites that hold located shots of this sensor with their counts, most shots first
 * (then by name, so the order is stable).
 */
export function siteChoices(shots: FeatureCollection, sessions: SessionSite[]): SiteChoice[] {
  const bySession = sessionSites(sessions);
  const names = new Map(sessions.map((s) => [s.siteId, s.siteName]));
  const counts = new Map<string, number>();
  for (const f of shots.features) {
    if (!f.geometry || f.geometry.type !== "Point") continue;
    const site = siteOfShot(f, bySession);
    if (site) counts.set(site, (counts.get(site) ?? 0) + 1);
  }
  return [...counts].map(([id, n]) => ({ id, name: names.get(id) ?? id, n })).sort((a, b) => b.n - a.n || a.name.localeCompare(b.name));
}

/**
 * The site the map opens on: the one of the session asked for in the address, if it has
 * located shots, else the site with the most located shots; "" (all sites) when there is none.
 */
export function defaultSite(choices: SiteChoice[], sessions: SessionSite[], sessionId: string): string {
  const ofSession = sessions.find((s) => s.id === sessionId)?.siteId;
  if (ofSession && choices.some((c) => c.id === ofSession)) return ofSession;
  return choices[0]?.id ?? "";
}

function extend(b: Bounds | null, [lon, lat]: number[]): Bounds | null {
  if (!Number.isFinite(lon) || !Number.isFinite(lat)) return b;
  if (!b)
    return [
      [lon!, lat!],
      [lon!, lat!],
    ];
  return [
    [Math.min(b[0][0], lon!), Math.min(b[0][1], lat!)],
    [Math.max(b[1][0], lon!), Math.max(b[1][1], lat!)],
  ];
}

/**
 * West-south / east-north corners of a site's located shots, stations and targets ("" = every
 * site). Stations and targets carry their siteId; shots are tied to a site through their session.
 */
export function siteBounds(site: string, parts: { shots: FeatureCollection; stations: FeatureCollection; targets: FeatureCollection }, sessions: SessionSite[]): Bounds | null {
  const bySession = sessionSites(sessions);
  let b: Bounds | null = null;
  for (const f of parts.shots.features) {
    if (f.geometry?.type !== "Point") continue;
    if (site && siteOfShot(f, bySession) !== site) continue;
    b = extend(b, (f.geometry as Point).coordinates);
  }
  for (const f of [...parts.stations.features, ...parts.targets.features]) {
    if (f.geometry?.type !== "Point") continue;
    if (site && f.properties?.siteId !== site) continue;
    b = extend(b, (f.geometry as Point).coordinates);
  }
  return b;
}
