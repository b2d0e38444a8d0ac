// Geographic (φ, λ, h) → geocentric (X, Y, Z) on GRS80 / WGS 84 and chord distances:
// IOGP/EPSG Guidance Note 7-2, method 9602 (geographic/geocentric conversions).
// X = (ν+h)cosφcosλ, Y = (ν+h)cosφsinλ, Z = ((1−e²)ν+h)sinφ, ν = a/√(1−e²sin²φ).
// Never a spherical (haversine) distance.
import { DomainError, requireFinite } from "./errors.ts";
import type { GeoPoint, GridPoint } from "./types.ts";

export type Ellipsoid = { a: number; invF: number };
export const WGS84: Ellipsoid = { a: 6378137, invF: 298.257223563 };
export const GRS80: Ellipsoid = { a: 6378137, invF: 298.257222101 };
export type Xyz = { x: number; y: number; z: number };

/** Geocentric X, Y, Z (m) of a point in degrees and ellipsoidal height (m). */
export function geodeticToGeocentric(p: GeoPoint, ellipsoid: Ellipsoid = WGS84, path = "geo"): Xyz {
  if (!p || typeof p !== "object") throw new DomainError(path, "missing", "a latitude/longitude/height is needed");
  const lat = requireFinite(p.lat, `${path}.lat`, "latitude (°)");
  const lon = requireFinite(p.lon, `${path}.lon`, "longitude (°)");
  const h = requireFinite(p.h, `${path}.h`, "ellipsoidal height (m)");
  if (lat < -90 || lat > 90) throw new DomainError(`${path}.lat`, "out_of_range", `latitude must lie between −90 and 90° (got ${lat})`);
  if (lon < -180 || lon > 360) throw new DomainError(`${path}.lon`, "out_of_range", `longitude must lie between −180 and 360° (got ${lon})`);
  const f = 1 / ellipsoid.invF;
  const e2 = f * (2 - f);
  const phi = (lat * Math.PI) / 180;
  const lam = (lon * Math.PI) / 180;
  const sp = Math.sin(phi);
  const cp = Math.cos(phi);
  const nu = ellipsoid.a / Math.sqrt(1 - e2 * sp * sp);
  return {
    x: (nu + h) * cp * Math.cos(lam),
    y: (nu + h) * cp * Math.sin(lam),
    z: ((1 - e2) * nu + h) * sp,
  };
}

function checkGrid(p: GridPoint, path: string): void {
  if (!p || typeof p !== "object") throw new DomainError(path, "missing", "grid coordinates are needed");
  requireFinite(p.e, `${path}.e`, "easting (m)");
  requireFinite(p.n, `${path}.n`, "northing (m)");
  requireFinite(p.h, `${path}.h`, "height (m)");
}

/** 3-D distance (m) between two points of a local metric grid. */
export function gridDistance3d(a: GridPoint, b: GridPoint, pathA = "station.grid", pathB = "target.grid"): number {
  checkGrid(a, pathA);
  checkGrid(b, pathB);
  return Math.hypot(b.e - a.e, b.n - a.n, b.h - a.h);
}

/** Straight-line (chord) distance (m) between two geographic points via geocentric X, Y, Z. */
export function geoChord(a: GeoPoint, b: GeoPoint, ellipsoid: Ellipsoid = WGS84, pathA = "station.geo", pathB = "target.geo"): number {
  const p = geodeticToGeocentric(a, ellipsoid, pathA);
  const q = geodeticToGeocentric(b, ellipsoid, pathB);
  return Math.hypot(q.x - p.x, q.y - p.y, q.z - p.z);
}
