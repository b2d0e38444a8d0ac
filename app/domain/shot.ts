// One check-shot (ranging.md §4): mean corrected range, repeatability (SD, n − 1), range error
// e = R̄ − D (mm), spec tolerance T(D) = a + b·D/1000 mm, limit k·T, within, wrap flag.
// Tolerance form ±(a mm + b ppm × D) as in ISO 17123-4 / maker specifications.
import { airState } from "./air.ts";
import { DomainError, requireFinite, requireNonNegative, requirePositive } from "./errors.ts";
import { cwRepeatabilityMm, phaseFromSamples, rangeFromPhase, unambiguousIntervalM, unwrapFrequencies } from "./phase.ts";
import { correctReportedRange, rangeFromRoundTrip } from "./range.ts";
import { referenceDistance } from "./reference.ts";
import { checkEdges } from "./coverage.ts";
import { requireFigure, requireFrequencyCount, requireRegisteredFrequency } from "./plausibility.ts";
import type { Rule, SensorSpec, ShotComputed, ShotInput } from "./types.ts";

/** Spec tolerance T(D) = a + b·D/1000 (mm), a in mm, b in ppm, D in m. */
export function toleranceMm(sensor: Pick<SensorSpec, "toleranceMm" | "tolerancePpm">, distanceM: number): number {
  const a = requireNonNegative(sensor.toleranceMm, "sensor.toleranceMm", "tolerance constant (mm)");
  const b = requireNonNegative(sensor.tolerancePpm, "sensor.tolerancePpm", "tolerance scale (ppm)");
  const d = requireNonNegative(distanceM, "reference.distanceM", "distance (m)");
  return a + (b * d) / 1000;
}

/** Wrap flag: |e| > L but some integer m ≠ 0 gives |e + m·R_u| ≤ L (all in mm). */
export function isWrap(errorMm: number, limitMm: number, unambiguousMm: number | null): boolean {
  if (unambiguousMm == null || !(unambiguousMm > 0) || Math.abs(errorMm) <= limitMm) return false;
  const m0 = Math.round(-errorMm / unambiguousMm);
  for (const m of [m0 - 1, m0, m0 + 1]) {
    if (m !== 0 && Math.abs(errorMm + m * unambiguousMm) <= limitMm) return true;
  }
  return false;
}

export function checkSensor(sensor: SensorSpec, path = "sensor"): void {
  if (!sensor || typeof sensor !== "object") throw new DomainError(path, "missing", "a sensor profile is needed");
  if (sensor.kind !== "pulsed" && sensor.kind !== "cw") throw new DomainError(`${path}.kind`, "invalid", `kind must be "pulsed" or "cw"`);
  requirePositive(sensor.wavelengthNm, `${path}.wavelengthNm`, "wavelength (nm)");
  requireNonNegative(sensor.toleranceMm, `${path}.toleranceMm`, "tolerance constant (mm)");
  requireNonNegative(sensor.tolerancePpm, `${path}.tolerancePpm`, "tolerance scale (ppm)");
  if (sensor.assumedRefractivity != null) requireFinite(sensor.assumedRefractivity, `${path}.assumedRefractivity`, "assumed refractivity (ppm)");
  const mod = sensor.modulationHz ?? [];
  if (!Array.isArray(mod)) throw new DomainError(`${path}.modulationHz`, "not_list", "modulation frequencies must be a list");
  mod.forEach((f, i) => requirePositive(f, `${path}.modulationHz.${i}`, "modulation frequency (Hz)"));
}

export function checkRule(rule: Rule, path = "rule"): void {
  if (!rule || typeof rule !== "object") throw new DomainError(path, "missing", "an acceptance rule is needed");
  const m = requireNonNegative(rule.minShots, `${path}.minShots`, "minimum shots");
  if (!Number.isInteger(m)) throw new DomainError(`${path}.minShots`, "not_integer", "minimum shots must be a whole number");
  requirePositive(rule.coverageK, `${path}.coverageK`, "coverage factor");
  const w = requireFinite(rule.minWithinPct, `${path}.minWithinPct`, "minimum share within (%)");
  if (w < 0 || w > 100) throw new DomainError(`${path}.minWithinPct`, "out_of_range", "minimum share within must lie between 0 and 100 %");
  checkEdges(rule.rangeBandEdgesM, `${path}.rangeBandEdgesM`);
  if (rule.referenceRatio != null) requirePositive(rule.referenceRatio, `${path}.referenceRatio`, "reference ratio");
  if (rule.statement != null && rule.statement !== "rmse" && rule.statement !== "nssda95") {
    throw new DomainError(`${path}.statement`, "invalid", `statement must be "rmse" or "nssda95"`);
  }
  if (rule.edmUncertaintyMm != null) requireNonNegative(rule.edmUncertaintyMm, `${path}.edmUncertaintyMm`, "EDM uncertainty (mm)");
  if (rule.edmUncertaintyPpm != null) requireNonNegative(rule.edmUncertaintyPpm, `${path}.edmUncertaintyPpm`, "EDM uncertainty (ppm)");
}

function sd(values: number[]): number | null {
  if (values.length < 2) return null;
  let m = 0;
  for (const v of values) m += v;
  m /= values.length;
  let ss = 0;
  for (const v of values) ss += (v - m) ** 2;
  return Math.sqrt(ss / (values.length - 1));
}

function list(v: unknown, path: string, what: string): unknown[] {
  if (!Array.isArray(v)) throw new DomainError(path, "not_list", `${what} must be a list`);
  if (v.length === 0) throw new DomainError(path, "empty", `${what} must not be empty`);
  return v;
}

/** Everything of one shot from its raw inputs; throws DomainError with a path relative to the shot. */
export function computeShot(input: ShotInput): ShotComputed {
  const { sensor, reference, readings, rule } = input;
  checkSensor(sensor);
  checkRule(rule);
  const air = airState(input.air, sensor.wavelengthNm);
  const ref = referenceDistance(reference);
  const D = ref.distanceM;

  if (!readings || typeof readings !== "object") throw new DomainError("readings", "missing", "readings are needed");
  const keys = ["rangesM", "roundTripNs", "phase"].filter((k) => k in readings && (readings as Record<string, unknown>)[k] != null);
  if (keys.length !== 1) throw new DomainError("readings", "invalid", "readings must hold exactly one of rangesM, roundTripNs or phase");

  let ranges: number[];
  let unambiguousM: number | null = null;
  let phaseSpreadM: number | null = null;
  let expectedSigmaMm: number | null = null;
  let readingsCount: number;

  if ("rangesM" in readings && readings.rangesM != null) {
    const raw = list(readings.rangesM, "readings.rangesM", "ranges");
    ranges = raw.map((r, i) => correctReportedRange(r as number, sensor, air.groupRefractivity, `readings.rangesM.${i}`));
    readingsCount = ranges.length;
  } else if ("roundTripNs" in readings && readings.roundTripNs != null) {
    const raw = list(readings.roundTripNs, "readings.roundTripNs", "round-trip times");
    ranges = raw.map((t, i) => rangeFromRoundTrip(t as number, air.n, `readings.roundTripNs.${i}`));
    readingsCount = ranges.length;
  } else {
    const raw = list((readings as { phase: unknown }).phase, "readings.phase", "phase readings");
    // ranging.md §9: only the sensor's registered frequencies, at most 4, checked before any
    // sample is read, so a forged frequency set never reaches the unwrapping search
    requireFrequencyCount(raw.length, "readings.phase");
    raw.forEach((p, i) => {
      if (!p || typeof p !== "object") throw new DomainError(`readings.phase.${i}`, "invalid", "a phase reading needs frequencyHz and samples");
      requireRegisteredFrequency((p as { frequencyHz: unknown }).frequencyHz, sensor.modulationHz ?? [], `readings.phase.${i}.frequencyHz`);
    });
    const parts = raw.map((p, i) => {
      const path = `readings.phase.${i}`;
      const { frequencyHz, samples } = p as { frequencyHz: number; samples: number[] };
      const f = requirePositive(frequencyHz, `${path}.frequencyHz`, "modulation frequency (Hz)");
      const est = phaseFromSamples(samples, `${path}.samples`);
      const rangeM = rangeFromPhase(est.phaseRad, f, air.n, path);
      const ru = unambiguousIntervalM(f, air.n, `${path}.frequencyHz`);
      return { frequencyHz: f, rangeM, est, ru };
    });
    const un = unwrapFrequencies(parts, air.n, "readings.phase");
    ranges = [un.rangeM];
    readingsCount = parts.length;
    unambiguousM = un.combinedM;
    if (parts.length > 1) phaseSpreadM = un.spreadM;
    // advisory σ of the mean of the unwrapped ranges: √(Σσᵢ²)/k
    let ss = 0;
    let ok = true;
    for (const p of parts) {
      const s = cwRepeatabilityMm(p.ru, p.est.amplitude, p.est.offset);
      if (s == null) ok = false;
      else ss += s * s;
    }
    expectedSigmaMm = ok ? Math.sqrt(ss) / parts.length : null;
  }

  if (unambiguousM == null && sensor.kind === "cw" && sensor.modulationHz && sensor.modulationHz.length > 0) {
    unambiguousM = unambiguousIntervalM(sensor.modulationHz, air.n);
  }

  // ranging.md §9: every figure finite, named by the input that made it otherwise
  requireFigure(air.n, "airTempC", "refractive index of air");
  requireFigure(D, "reference.distanceM", "reference distance (m)");
  let sum = 0;
  for (const r of ranges) sum += r;
  const rangeM = requireFigure(sum / ranges.length, "readings", "mean range (m)");
  const errorMm = requireFigure((rangeM - D) * 1000, "readings", "range error (mm)");
  const tol = requireFigure(toleranceMm(sensor, D), "sensor.tolerancePpm", "spec tolerance (mm)");
  const limitMm = requireFigure(rule.coverageK * tol, "rule.coverageK", "per-shot limit (mm)");
  const within = Math.abs(errorMm) <= limitMm;
  const rep = sd(ranges);
  if (rep != null) requireFigure(rep, "readings", "repeatability (m)");
  const wrap = sensor.kind === "cw" && isWrap(errorMm, limitMm, unambiguousM == null ? null : unambiguousM * 1000);
  return {
    referenceM: D,
    rangeM,
    errorMm,
    toleranceMm: tol,
    limitMm,
    within,
    repeatabilityMm: rep == null ? null : rep * 1000,
    readingsCount,
    wrap,
    unambiguousM,
    phaseSpreadM,
    expectedSigmaMm,
    airDefaulted: [...air.defaulted],
    tapeCorrectionMm: ref.tapeCorrectionMm,
  };
}
