// Reference distance: steel-tape corrections (Ghilani & Wolf, Elementary Surveying, taping
// chapter): C_T = α(T − T_s)L, C_P = (P − P_s)L/(AE), C_S = −w²L_s³/(24P²) per span,
// C_L = ppm·1e-6·L; EDM as entered; coordinates → 3-D grid distance or geocentric chord.
import { DomainError, requireFinite, requirePositive, requireNonNegative } from "./errors.ts";
import { geoChord, gridDistance3d } from "./geodesy.ts";
import { requireDistanceM, requireFigure } from "./plausibility.ts";
import type { GeoPoint, GridPoint, Position, ReferenceInput, TapeSpec } from "./types.ts";

/** Thermal expansion coefficient of a steel tape (per °C). */
export const STEEL_ALPHA_PER_C = 11.6e-6;

/** Temperature correction C_T = α(T − T_s)L, in the unit of L (any consistent units). */
export function tapeTemperatureCorrection(length: number, temp: number, standardTemp: number, alpha = STEEL_ALPHA_PER_C): number {
  return alpha * (temp - standardTemp) * length;
}
/** Tension correction C_P = (P − P_s)L/(A·E), in the unit of L (P and A·E in the same force unit). */
export function tapeTensionCorrection(length: number, pull: number, standardPull: number, areaTimesModulus: number): number {
  return ((pull - standardPull) * length) / areaTimesModulus;
}
/** Sag correction of one span hanging between its ends: −w²L_s³/(24P²) (w force per unit length). */
export function tapeSagCorrection(weightPerLength: number, spanLength: number, pull: number): number {
  return -(weightPerLength * weightPerLength * spanLength ** 3) / (24 * pull * pull);
}

export type TapeCorrections = { temperatureM: number; tensionM: number; sagM: number; calibrationM: number; totalM: number; distanceM: number };

export function tapeCorrections(input: { distanceM: number; tape: TapeSpec; tempC: number; tensionN: number; support: "ground" | "ends"; spans: number }, path = "reference"): TapeCorrections {
  const L = requireDistanceM(requirePositive(input.distanceM, `${path}.distanceM`, "taped distance (m)"), `${path}.distanceM`, "taped distance");
  const tape = input.tape;
  if (!tape || typeof tape !== "object") throw new DomainError(`${path}.tape`, "missing", "the tape's constants are needed");
  const tp = `${path}.tape`;
  const Ts = requireFinite(tape.standardTempC, `${tp}.standardTempC`, "tape standard temperature (°C)");
  const Ps = requireNonNegative(tape.standardTensionN, `${tp}.standardTensionN`, "tape standard tension (N)");
  const A = requirePositive(tape.areaMm2, `${tp}.areaMm2`, "tape cross-section (mm²)");
  const E = requirePositive(tape.modulusGPa, `${tp}.modulusGPa`, "tape modulus (GPa)");
  const w = requireNonNegative(tape.weightNPerM, `${tp}.weightNPerM`, "tape weight (N/m)");
  const ppm = requireFinite(tape.calibrationPpm, `${tp}.calibrationPpm`, "tape certificate correction (ppm)");
  const T = requireFinite(input.tempC, `${path}.tempC`, "tape temperature (°C)");
  if (T < -80 || T > 90) throw new DomainError(`${path}.tempC`, "out_of_range", `tape temperature must lie between −80 and 90 °C (got ${T})`);
  const P = requirePositive(input.tensionN, `${path}.tensionN`, "tape pull (N)");
  if (input.support !== "ground" && input.support !== "ends") {
    throw new DomainError(`${path}.support`, "invalid", `support must be "ground" or "ends" (got ${String(input.support)})`);
  }
  const temperatureM = tapeTemperatureCorrection(L, T, Ts);
  const tensionM = tapeTensionCorrection(L, P, Ps, A * 1e-6 * E * 1e9);
  let sagM = 0;
  if (input.support === "ends") {
    const spans = requirePositive(input.spans, `${path}.spans`, "number of spans");
    if (!Number.isInteger(spans)) throw new DomainError(`${path}.spans`, "not_integer", `spans must be a whole number (got ${spans})`);
    sagM = spans * tapeSagCorrection(w, L / spans, P);
  }
  const calibrationM = ppm * 1e-6 * L;
  const totalM = temperatureM + tensionM + sagM + calibrationM;
  const distanceM = requireFigure(L + totalM, `${path}.distanceM`, "corrected tape distance (m)");
  if (!(distanceM > 0)) throw new DomainError(`${path}.distanceM`, "not_positive", "the corrected tape distance is not positive");
  requireDistanceM(distanceM, `${path}.distanceM`, "corrected tape distance");
  return { temperatureM, tensionM, sagM, calibrationM, totalM, distanceM };
}

export type ReferenceResult = { distanceM: number; method: ReferenceInput["method"]; tapeCorrectionMm: number | null; tape: TapeCorrections | null };

function lift<T extends GridPoint | GeoPoint>(p: T, dh: number): T {
  return { ...p, h: p.h + dh };
}

/** Corrected reference distance D (m) of a shot; paths start with `reference.`. */
export function referenceDistance(ref: ReferenceInput, path = "reference"): ReferenceResult {
  if (!ref || typeof ref !== "object") throw new DomainError(path, "missing", "a reference distance is needed");
  switch (ref.method) {
    case "edm": {
      const d = requireDistanceM(requirePositive(ref.distanceM, `${path}.distanceM`, "reference distance (m)"), `${path}.distanceM`, "reference distance");
      return { distanceM: d, method: "edm", tapeCorrectionMm: null, tape: null };
    }
    case "tape": {
      const t = tapeCorrections(ref, path);
      return { distanceM: t.distanceM, method: "tape", tapeCorrectionMm: t.totalM * 1000, tape: t };
    }
    case "coordinates": {
      const hi = requireFinite(ref.instrumentHeightM, `${path}.instrumentHeightM`, "instrument height (m)");
      const ht = requireFinite(ref.targetHeightM, `${path}.targetHeightM`, "target height (m)");
      const s: Position = ref.station ?? {};
      const t: Position = ref.target ?? {};
      if (!ref.station) throw new DomainError(`${path}.station`, "missing", "the station's position is needed");
      if (!ref.target) throw new DomainError(`${path}.target`, "missing", "the target's position is needed");
      let d: number;
      if (s.grid && t.grid) {
        d = gridDistance3d(lift(s.grid, hi), lift(t.grid, ht), `${path}.station.grid`, `${path}.target.grid`);
      } else if (s.geo && t.geo) {
        d = geoChord(lift(s.geo, hi), lift(t.geo, ht), undefined, `${path}.station.geo`, `${path}.target.geo`);
      } else {
        const missing = !(s.grid || s.geo) ? `${path}.station` : !(t.grid || t.geo) ? `${path}.target` : path;
        throw new DomainError(missing, "no_common_coordinates", "station and target need positions in the same system (both grid or both geo)");
      }
      if (!(d > 0)) throw new DomainError(path, "not_positive", "station and target coincide (distance 0)");
      // a surveyed pair kilometres apart is a registry slip, named at the station
      requireDistanceM(d, `${path}.station`, "the station-to-target distance");
      return { distanceM: d, method: "coordinates", tapeCorrectionMm: null, tape: null };
    }
    default:
      throw new DomainError(`${path}.method`, "invalid", `unknown reference method ${String((ref as { method?: unknown }).method)}`);
  }
}
