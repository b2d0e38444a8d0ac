// Continuous-wave (phase) ranging: N-bucket correlation samples Iₖ = B + A·cos(φ − 2πk/N),
// φ = atan2(Σ Iₖ sin δₖ, Σ Iₖ cos δₖ), A = (2/N)|Σ Iₖ e^{iδₖ}|, B = mean Iₖ; R = c₀φ/(4πf·n),
// R_u = c₀/(2f·n); multi-frequency unwrapping by least spread within c₀/(2·gcd(f)·n).
// Advisory repeatability σ_R ≈ (R_u/√8)·√B/(2A): Lange & Seitz (2001), IEEE J. Quantum
// Electronics 37(3) — formula from memory, never used for a verdict.
import { DomainError, requireFinite, requirePositive } from "./errors.ts";
import { C0 } from "./range.ts";
import { MAX_DISTANCE_M, requireFrequencyCount } from "./plausibility.ts";

export type PhaseEstimate = { phaseRad: number; amplitude: number; offset: number };

/** Phase φ ∈ [0, 2π), amplitude A and offset B from N ≥ 3 equally spaced correlation samples. */
export function phaseFromSamples(samples: number[], path = "readings.phase.0.samples"): PhaseEstimate {
  if (!Array.isArray(samples)) throw new DomainError(path, "not_list", "samples must be a list of numbers");
  const N = samples.length;
  if (N < 3) throw new DomainError(path, "too_few_samples", `at least 3 correlation samples are needed (got ${N})`);
  let s = 0;
  let c = 0;
  let sum = 0;
  let peak = 0;
  for (let k = 0; k < N; k++) {
    const I = requireFinite(samples[k], `${path}.${k}`, `sample ${k}`);
    const d = (2 * Math.PI * k) / N;
    s += I * Math.sin(d);
    c += I * Math.cos(d);
    sum += I;
    if (Math.abs(I) > peak) peak = Math.abs(I);
  }
  const amplitude = (2 / N) * Math.hypot(s, c);
  // relative floor: a vanishing modulation leaves only rounding noise in s, c
  if (!(amplitude > 1e-12 * peak)) {
    throw new DomainError(path, "amplitude_not_positive", `the samples carry no modulation (amplitude ${amplitude} ≤ 0)`);
  }
  let phaseRad = Math.atan2(s, c);
  if (phaseRad < 0) phaseRad += 2 * Math.PI;
  if (phaseRad >= 2 * Math.PI) phaseRad -= 2 * Math.PI;
  return { phaseRad, amplitude, offset: sum / N };
}

/** Range (m) of a phase φ (rad) at modulation frequency f (Hz) in air of index n. */
export function rangeFromPhase(phaseRad: number, frequencyHz: number, n = 1, path = "readings.phase.0"): number {
  const phi = requireFinite(phaseRad, `${path}.phase`, "phase (rad)");
  const f = requirePositive(frequencyHz, `${path}.frequencyHz`, "modulation frequency (Hz)");
  const idx = requirePositive(n, "n", "refractive index");
  return (C0 * phi) / (4 * Math.PI * f * idx);
}

function gcd(a: number, b: number): number {
  while (b) [a, b] = [b, a % b];
  return a;
}

/** Greatest common divisor of the frequencies, rounded to whole hertz. */
export function frequencyGcdHz(frequenciesHz: number[]): number {
  let g = 0;
  for (const f of frequenciesHz) g = gcd(g, Math.max(1, Math.round(f)));
  return g;
}

/**
 * Unambiguous interval (m): c₀/(2·f·n) for one frequency; for several, the combined
 * interval c₀/(2·gcd(f)·n).
 */
export function unambiguousIntervalM(frequencyHz: number | number[], n = 1, path = "sensor.modulationHz"): number {
  const idx = requirePositive(n, "n", "refractive index");
  if (Array.isArray(frequencyHz)) {
    if (frequencyHz.length === 0) throw new DomainError(path, "empty", "at least one modulation frequency is needed");
    frequencyHz.forEach((f, i) => requirePositive(f, `${path}.${i}`, "modulation frequency (Hz)"));
    const f = frequencyHz.length === 1 ? frequencyHz[0] : frequencyGcdHz(frequencyHz);
    return C0 / (2 * f * idx);
  }
  const f = requirePositive(frequencyHz, path, "modulation frequency (Hz)");
  return C0 / (2 * f * idx);
}

export type UnwrapInput = { frequencyHz: number; rangeM: number };
export type UnwrapResult = {
  rangeM: number;
  spreadM: number;
  wraps: number[];
  unwrappedM: number[];
  combinedM: number;
  /** How many wrap candidates the search walked (bounded by MAX_UNWRAP_CANDIDATES). */
  candidates: number;
};

/**
 * Most wrap candidates (summed over the frequencies) one shot may need. The search walks each
 * candidate once per frequency (k ≤ 4), so a shot costs well under a millisecond; a frequency
 * set whose interval up to MAX_DISTANCE_M needs more is refused, never searched.
 */
export const MAX_UNWRAP_CANDIDATES = 20_000;

/**
 * Multi-frequency unwrapping: wrap counts nᵢ ≥ 0 with Rᵢ + nᵢ·R_u,i below the combined interval
 * for which the unwrapped ranges agree best (least max − min). Exact search: the smallest window
 * over the sorted candidates that holds one candidate of every frequency. Candidates stop at
 * MAX_DISTANCE_M too (ranging.md §9: no range lies beyond), which bounds incommensurate sets.
 */
export function unwrapFrequencies(parts: UnwrapInput[], n = 1, path = "readings.phase"): UnwrapResult {
  if (!Array.isArray(parts) || parts.length === 0) throw new DomainError(path, "empty", "at least one frequency is needed");
  requireFrequencyCount(parts.length, path);
  const k = parts.length;
  const ru = parts.map((p, i) => unambiguousIntervalM(p.frequencyHz, n, `${path}.${i}.frequencyHz`));
  const r = parts.map((p, i) => requireFinite(p.rangeM, `${path}.${i}`, "wrapped range (m)"));
  const combinedM = unambiguousIntervalM(
    parts.map((p) => p.frequencyHz),
    n,
    path,
  );
  if (k === 1) return { rangeM: r[0], spreadM: 0, wraps: [0], unwrappedM: [r[0]], combinedM, candidates: 1 };
  // candidates per frequency, counted before any is made: a set that needs too many is refused
  const horizonM = Math.min(combinedM, MAX_DISTANCE_M);
  const counts = ru.map((u, i) => Math.max(1, Math.ceil((horizonM - r[i]) / u - 1e-9)));
  let total = 0;
  for (const c of counts) total += c;
  if (!(total <= MAX_UNWRAP_CANDIDATES)) {
    throw new DomainError(
      path,
      "unwrap_too_wide",
      `these ${k} modulation frequencies leave ${Number.isFinite(total) ? total : "unboundedly many"} possible wrap counts up to ${Math.round(horizonM)} m ` +
        `(at most ${MAX_UNWRAP_CANDIDATES}): use frequencies with a larger common divisor`,
    );
  }
  // each frequency's candidates Rᵢ + m·R_u,i already rise with m: a k-way merge sorts them all
  const val = new Float64Array(total);
  const who = new Int32Array(total);
  const next = new Int32Array(k);
  for (let o = 0; o < total; o++) {
    let pick = -1;
    let best = Infinity;
    for (let i = 0; i < k; i++) {
      if (next[i] < counts[i]) {
        const v = r[i] + next[i] * ru[i];
        if (v < best) {
          best = v;
          pick = i;
        }
      }
    }
    val[o] = best;
    who[o] = pick;
    next[pick]++;
  }
  const have = new Int32Array(k);
  let covered = 0;
  let best = Infinity;
  let bestLo = 0;
  let bestHi = 0;
  let lo = 0;
  for (let hi = 0; hi < total; hi++) {
    const wh = who[hi];
    if (have[wh]++ === 0) covered++;
    while (covered === k) {
      const spread = val[hi] - val[lo];
      if (spread < best - 1e-12) {
        best = spread;
        bestLo = lo;
        bestHi = hi;
      }
      const wl = who[lo];
      if (--have[wl] === 0) covered--;
      lo++;
    }
  }
  // pick, inside the best window, the candidate of each frequency nearest the window's middle
  const mid = (val[bestLo] + val[bestHi]) / 2;
  const wraps = new Array<number>(k).fill(-1);
  const unwrappedM = new Array<number>(k).fill(0);
  for (let j = bestLo; j <= bestHi; j++) {
    const i = who[j];
    if (wraps[i] < 0 || Math.abs(val[j] - mid) < Math.abs(unwrappedM[i] - mid)) {
      wraps[i] = Math.round((val[j] - r[i]) / ru[i]);
      unwrappedM[i] = val[j];
    }
  }
  let sum = 0;
  let mn = Infinity;
  let mx = -Infinity;
  for (const u of unwrappedM) {
    sum += u;
    if (u < mn) mn = u;
    if (u > mx) mx = u;
  }
  return { rangeM: sum / k, spreadM: mx - mn, wraps, unwrappedM, combinedM, candidates: total };
}

/**
 * Advisory CW range repeatability (mm): σ_R ≈ (R_u/√8)·√B/(2A), Lange & Seitz 2001 (from memory).
 * Null when B < 0 (an offset-subtracted signal gives no shot-noise figure).
 */
export function cwRepeatabilityMm(unambiguousM: number, amplitude: number, offset: number): number | null {
  const u = requirePositive(unambiguousM, "unambiguousM", "unambiguous interval (m)");
  const a = requirePositive(amplitude, "amplitude", "amplitude");
  const b = requireFinite(offset, "offset", "offset");
  if (b < 0) return null;
  return (((u / Math.sqrt(8)) * Math.sqrt(b)) / (2 * a)) * 1000;
}
