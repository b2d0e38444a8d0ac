// Plausibility (ranging.md §9): bounds the physics allows, and the "mm typed as m?" flag.
// A value outside the bounds is rejected with its field path; an implausible error is only
// flagged, so the crew (or the CSV import preview) confirms it before it is saved.
import { DomainError } from "./errors.ts";

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

// ---------------------------------------------------------------------------------------------
// Bounds checks (issue 11): one wording shared by the sync schema, the ranging core and the CSV
// import preview, so the crew reads the same sentence wherever a reading is refused.

/** The sentence for a length outside (0, MAX_DISTANCE_M] m; `what` names the field ("range"). */
export function distanceBoundsMessage(what: string): string {
  return `${what} must be greater than 0 and at most ${MAX_DISTANCE_M} m`;
}
/** The sentence for a round-trip time outside (0, MAX_ROUND_TRIP_NS] ns. */
export function roundTripBoundsMessage(what = "round-trip time"): string {
  return `${what} must be greater than 0 and at most ${MAX_ROUND_TRIP_NS} ns`;
}

function bounded(v: unknown, max: number, path: string, message: string): number {
  if (typeof v !== "number" || !Number.isFinite(v)) throw new DomainError(path, "not_finite", `${message} (got ${String(v)})`);
  if (!(v > 0) || v > max) throw new DomainError(path, "implausible", `${message} (got ${v})`);
  return v;
}

/** A reported range or reference distance (m) in (0, MAX_DISTANCE_M]. */
export function requireDistanceM(v: unknown, path: string, what: string): number {
  return bounded(v, MAX_DISTANCE_M, path, distanceBoundsMessage(what));
}

/** A round-trip time (ns) in (0, MAX_ROUND_TRIP_NS]. */
export function requireRoundTripNs(v: unknown, path: string, what = "round-trip time"): number {
  return bounded(v, MAX_ROUND_TRIP_NS, path, roundTripBoundsMessage(what));
}

/** A computed figure must be finite; `path` names the input that made it so. */
export function requireFigure(v: number, path: string, what: string): number {
  if (!Number.isFinite(v)) {
    throw new DomainError(path, "figure_not_finite", `the computed ${what} is not a finite number (${v}): the inputs are out of any physical range`);
  }
  return v;
}

/** A CW shot uses at most MAX_FREQUENCIES frequencies. */
export function requireFrequencyCount(n: number, path: string): void {
  if (n > MAX_FREQUENCIES) {
    throw new DomainError(path, "too_many_frequencies", `at most ${MAX_FREQUENCIES} modulation frequencies a shot (got ${n})`);
  }
}

/** A shot's modulation frequency must be one its sensor has registered (±FREQUENCY_MATCH_HZ). */
export function requireRegisteredFrequency(frequencyHz: unknown, registeredHz: readonly number[], path: string): number {
  if (typeof frequencyHz !== "number" || !Number.isFinite(frequencyHz) || !(frequencyHz > 0)) {
    throw new DomainError(path, "not_positive", `modulation frequency (Hz) must be a number greater than 0 (got ${String(frequencyHz)})`);
  }
  if (!registeredHz.some((r) => Math.abs(r - frequencyHz) <= FREQUENCY_MATCH_HZ)) {
    const list = registeredHz.length ? registeredHz.map((f) => `${f} Hz`).join(", ") : "none";
    throw new DomainError(path, "unregistered_frequency", `modulation frequency ${frequencyHz} Hz is not one the sensor has registered (registered: ${list})`);
  }
  return frequencyHz;
}
