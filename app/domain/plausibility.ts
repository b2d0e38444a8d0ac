// Plausibility (ranging.md §9): bounds the physics allows, and the "mm typed as m?" flag.
// A value outside the bounds is rejected with its field path; an implausible error is only
// flagged, so the crew (or the CSV import preview) confirms it before it is saved.

/** Reported ranges and reference distances lie in (0, MAX_DISTANCE_M] m. */
export const MAX_DISTANCE_M = 10_000;
/** A round-trip time lies in (0, MAX_ROUND_TRIP_NS] ns (about 10 km there and back). */
export const MAX_ROUND_TRIP_NS = 70_000;
/** A continuous-wave shot uses at most this many modulation frequencies. */
export const MAX_FREQUENCIES = 4;
/** A shot's frequency matches a registered one when within this many Hz. */
export const FREQUENCY_MATCH_HZ = 1;
/** |error| above this (mm) with a reference above IMPLAUSIBLE_MIN_REFERENCE_M is flagged. */
export const IMPLAUSIBLE_ERROR_MM = 1000;
export const IMPLAUSIBLE_MIN_REFERENCE_M = 1;

/** True when a range error looks like a unit slip (e.g. millimetres typed as metres). */
export function isImplausible(errorMm: number, referenceM: number): boolean {
  return Math.abs(errorMm) > IMPLAUSIBLE_ERROR_MM && referenceM > IMPLAUSIBLE_MIN_REFERENCE_M;
}
