// Range from what a pulsed sensor gives: reported ranges and round-trip times.
// c₀ = 299 792 458 m/s exactly (BIPM SI Brochure, 9th ed.); R = c₀·t/(2·n_air);
// reported ranges get the first velocity correction D = D′·(1 + (N_ref − N_L)·1e-6).
import { requireFinite, requirePositive } from "./errors.ts";
import { firstVelocityCorrectionPpm } from "./air.ts";
import { requireDistanceM, requireFigure, requireRoundTripNs } from "./plausibility.ts";

export const C0 = 299_792_458;

/** One-way range (m) from a round-trip time (ns) in air of index n (1 = vacuum). */
export function rangeFromRoundTrip(roundTripNs: number, n = 1, path = "readings.roundTripNs.0"): number {
  // ≤ 0 keeps its own sentence; beyond 70 000 ns the physics bound of ranging.md §9
  const t = requireRoundTripNs(requirePositive(roundTripNs, path, "round-trip time (ns)"), path);
  const idx = requirePositive(n, "n", "refractive index");
  return requireFigure((C0 * t * 1e-9) / (2 * idx), path, "range (m)");
}

/**
 * A sensor's own reported range corrected to the session's air.
 * When the sensor applies its own atmospheric correction the range is used as is.
 */
export function correctReportedRange(rangeM: number, sensor: { appliesAirCorrection: boolean; assumedRefractivity?: number | null }, groupRefractivity: number, path = "readings.rangesM.0"): number {
  const r = requireDistanceM(requirePositive(rangeM, path, "reported range (m)"), path, "range");
  if (sensor.appliesAirCorrection) return r;
  const k = firstVelocityCorrectionPpm(sensor.assumedRefractivity ?? 0, requireFinite(groupRefractivity, "groupRefractivity"));
  return requireFigure(r * (1 + k * 1e-6), path, "air-corrected range (m)");
}
