// Bands of the breakdowns and the coverage checklist (ranging.md §5–6): reflectance class
// (dark < 20 %, mid 20–60 % inclusive, bright > 60 %, retro), illuminance band (low < 10,
// moderate 10 to < 50, high ≥ 50 klux), range bands [lower, upper) of the project's edges.
// The thresholds are the project's own rule; no published formula.
import { DomainError, requireFinite, requireNonNegative } from "./errors.ts";
import type { CoverageInput, CoverageResult, CoverageCell, IlluminanceBand, ReflectanceClass } from "./types.ts";

export const COVERAGE_NEED = 3;
export const BRIGHT_SUN_KLUX = 50;

/** Checks band edges: a non-empty, strictly ascending list of finite numbers ≥ 0. */
export function checkEdges(edges: number[], path = "rule.rangeBandEdgesM"): void {
  if (!Array.isArray(edges) || edges.length === 0) throw new DomainError(path, "empty", "range band edges must be a non-empty list");
  for (let i = 0; i < edges.length; i++) {
    requireNonNegative(edges[i], `${path}.${i}`, "range band edge (m)");
    if (i > 0 && !(edges[i] > edges[i - 1])) throw new DomainError(`${path}.${i}`, "not_ascending", "range band edges must increase strictly");
  }
}

/** Labels of the bands of the edges, in order: "0-10", "10-30", "30-100", "100+". */
export function rangeBandLabels(edges: number[]): string[] {
  const out: string[] = [];
  for (let i = 0; i + 1 < edges.length; i++) out.push(`${edges[i]}-${edges[i + 1]}`);
  out.push(`${edges[edges.length - 1]}+`);
  return out;
}

/**
 * Index of the band [edgeᵢ, edgeᵢ₊₁) holding d, the last band being open-ended; −1 below the
 * first edge. No checks (hot path).
 */
export function rangeBandIndex(d: number, edges: number[]): number {
  if (d < edges[0]) return -1;
  let lo = 0;
  let hi = edges.length - 1;
  while (lo < hi) {
    const mid = (lo + hi + 1) >> 1;
    if (d >= edges[mid]) lo = mid;
    else hi = mid - 1;
  }
  return lo;
}

/** Range band label of a reference distance; below the first edge it is "<edge". */
export function rangeBandOf(distanceM: number, edges: number[]): string {
  const d = requireFinite(distanceM, "reference.distanceM", "distance (m)");
  if (d < 0) throw new DomainError("reference.distanceM", "negative", `distance must not be negative (got ${d})`);
  checkEdges(edges);
  const i = rangeBandIndex(d, edges);
  if (i < 0) return `<${edges[0]}`;
  return i === edges.length - 1 ? `${edges[i]}+` : `${edges[i]}-${edges[i + 1]}`;
}

/** ranging.md §5: a board under this reflectance (%) is dark; above BRIGHT_ABOVE_PCT, bright. The only copy of both. */
export const DARK_BELOW_PCT = 20;
export const BRIGHT_ABOVE_PCT = 60;

export function reflectanceClass(pct: number, retro: boolean): ReflectanceClass {
  if (retro) return "retro";
  const p = requireFinite(pct, "reflectancePct", "reflectance (%)");
  if (p < 0) throw new DomainError("reflectancePct", "negative", `reflectance must not be negative (got ${p})`);
  if (p < DARK_BELOW_PCT) return "dark";
  if (p <= BRIGHT_ABOVE_PCT) return "mid";
  return "bright";
}

export function illuminanceBand(klux: number): IlluminanceBand {
  const k = requireNonNegative(klux, "illuminanceKlux", "illuminance (klux)");
  if (k < 10) return "low";
  if (k < 50) return "moderate";
  return "high";
}

/**
 * Coverage checklist: every range band × {dark, bright} needs ≥ 3 shots; an outdoor sensor
 * needs a shot at ≥ 50 klux. Guidance only, never part of the verdict.
 */
export function coverageChecklist(input: CoverageInput): CoverageResult {
  const { sensor, rule, shots } = input;
  checkEdges(rule.rangeBandEdgesM);
  const edges = rule.rangeBandEdgesM;
  const labels = rangeBandLabels(edges);
  const dark = new Int32Array(labels.length);
  const bright = new Int32Array(labels.length);
  let sun = false;
  for (let i = 0; i < shots.length; i++) {
    const s = shots[i];
    if (s.illuminanceKlux != null && s.illuminanceKlux >= BRIGHT_SUN_KLUX) sun = true;
    if (s.retro) continue;
    const b = rangeBandIndex(s.referenceM, edges);
    if (b < 0) continue;
    if (s.reflectancePct < DARK_BELOW_PCT) dark[b]++;
    else if (s.reflectancePct > BRIGHT_ABOVE_PCT) bright[b]++;
  }
  return coverageFromCounts(sensor, labels, dark, bright, sun);
}

/** The checklist from per-band counts of dark and bright shots (shared with sensorReport). */
export function coverageFromCounts(sensor: { outdoor: boolean }, labels: string[], dark: ArrayLike<number>, bright: ArrayLike<number>, sun: boolean): CoverageResult {
  const cells: CoverageCell[] = [];
  for (let b = 0; b < labels.length; b++) {
    cells.push({ rangeBand: labels[b], reflectance: "dark", have: dark[b], need: COVERAGE_NEED });
    cells.push({ rangeBand: labels[b], reflectance: "bright", have: bright[b], need: COVERAGE_NEED });
  }
  const missing = cells.filter((c) => c.have < c.need);
  const needsBrightSun = !!sensor.outdoor && !sun;
  return { complete: missing.length === 0 && !needsBrightSun, missing, needsBrightSun, cells };
}

export type SiteTarget = { id: string; label: string; referenceM: number | null; reflectancePct: number; retro: boolean };
export type SiteCell = { rangeBand: string; reflectance: "dark" | "bright"; targets: SiteTarget[] };

/**
 * The checklist cells a site can actually fill (ranging.md §5–6): each target with a surveyed
 * distance falls in one range band × {dark, bright} cell; mid-grey and retro targets fill none,
 * nor does a target below the first edge or without a distance. Returns every cell of the
 * edges, each with the targets that fill it (an empty list: out of this site's reach).
 */
export function siteCoverageCells(targets: SiteTarget[], edges: number[]): SiteCell[] {
  checkEdges(edges);
  const labels = rangeBandLabels(edges);
  const cells: SiteCell[] = labels.flatMap((b) => [
    { rangeBand: b, reflectance: "dark" as const, targets: [] as SiteTarget[] },
    { rangeBand: b, reflectance: "bright" as const, targets: [] as SiteTarget[] },
  ]);
  for (const t of targets) {
    if (t.referenceM == null || !Number.isFinite(t.referenceM) || t.retro) continue;
    const b = rangeBandIndex(t.referenceM, edges);
    if (b < 0) continue;
    const cls = reflectanceClass(t.reflectancePct, false);
    if (cls === "dark") cells[2 * b]!.targets.push(t);
    else if (cls === "bright") cells[2 * b + 1]!.targets.push(t);
  }
  return cells;
}
