// Uncertainty of the reference and how the result is stated (ranging.md §7, issue 15).
// u_ref is a standard uncertainty (k = 1, mm); an unknown one stays null, never 0, so a report
// can never claim a reference accuracy nobody measured. The combined figure adds the
// reference's RMS uncertainty in quadrature, as ASPRS Positional Accuracy Standards, Edition 2
// (2023) does for survey checkpoints; the zero-offset t test is common practice adapted from
// the zero-point test of ISO 17123-4 (written for reflector EDM: no conformance is claimed).
import { DomainError, requireNonNegative } from "./errors.ts";
import type { Statement } from "./types.ts";

/** An instrument's or tape's stated uncertainty a + b·L (mm, ppm); either part may be missing. */
export type LinearUncertainty = { uncertaintyMm?: number | null; uncertaintyPpm?: number | null };

export type ReferenceUncertaintyInput = {
  method: "tape" | "edm" | "coordinates";
  /** The shot's own `reference.uncertaintyMm`: wins over everything else. */
  explicitMm?: number | null;
  /** tape: the taped value L; edm: the entered distance D (m). */
  distanceM?: number | null;
  /** tape: the tape's certificate figures. */
  tape?: LinearUncertainty | null;
  /** coordinates: the surveyed points' 1-D standard uncertainties (mm). */
  stationSigmaMm?: number | null;
  targetSigmaMm?: number | null;
  /** edm: the reference EDM the shot names (`reference.edmId`), when it names one. */
  edm?: LinearUncertainty | null;
  /** edm without a named EDM: the figures of the session's project's rule. */
  ruleEdm?: { edmUncertaintyMm?: number | null; edmUncertaintyPpm?: number | null } | null;
};

const known = (v: number | null | undefined): v is number => typeof v === "number" && Number.isFinite(v);

/** a + b·L/1000 mm; one missing part counts as 0, both missing is unknown (null). */
export function linearUncertaintyMm(mm: number | null | undefined, ppm: number | null | undefined, lengthM: number | null | undefined): number | null {
  if (!known(mm) && !known(ppm)) return null;
  if (known(ppm) && !known(lengthM)) return null;
  return (known(mm) ? mm : 0) + (known(ppm) ? (ppm * (lengthM as number)) / 1000 : 0);
}

/** u_ref of one shot in the order of ranging.md §7; null when none of the sources is known. */
export function referenceUncertaintyMm(input: ReferenceUncertaintyInput): number | null {
  if (input.explicitMm != null) return requireNonNegative(input.explicitMm, "reference.uncertaintyMm", "reference uncertainty (mm)");
  switch (input.method) {
    case "tape":
      return input.tape ? linearUncertaintyMm(input.tape.uncertaintyMm, input.tape.uncertaintyPpm, input.distanceM) : null;
    case "coordinates": {
      const s = input.stationSigmaMm;
      const t = input.targetSigmaMm;
      return known(s) && known(t) ? Math.hypot(s, t) : null;
    }
    case "edm":
      if (input.edm) return linearUncertaintyMm(input.edm.uncertaintyMm, input.edm.uncertaintyPpm, input.distanceM);
      return input.ruleEdm ? linearUncertaintyMm(input.ruleEdm.edmUncertaintyMm, input.ruleEdm.edmUncertaintyPpm, input.distanceM) : null;
    default:
      throw new DomainError("reference.method", "invalid", `unknown reference method ${String(input.method)}`);
  }
}

/** √(RMSE² + referenceRmse²), the reference's error included (ASPRS Edition 2); null when either is unknown. */
export function combinedRmseMm(rmseMm: number | null, referenceRmseMm: number | null): number | null {
  return rmseMm == null || referenceRmseMm == null ? null : Math.hypot(rmseMm, referenceRmseMm);
}

/**
 * Past due: the session's own calendar date (the date part of its ISO start, in its own
 * offset) is after the certificate's due date ("YYYY-MM-DD").
 */
export function pastDueOn(due: string | null | undefined, startedAt: string): boolean {
  if (!due) return false;
  return startedAt.slice(0, 10) > due.slice(0, 10);
}

/** Days from `today` to `due` (both "YYYY-MM-DD"); negative once past. */
export function daysUntil(due: string, today: string): number {
  return Math.round((Date.parse(`${due.slice(0, 10)}T00:00:00Z`) - Date.parse(`${today.slice(0, 10)}T00:00:00Z`)) / 86_400_000);
}

export const LASER_CLASSES = ["1", "1M", "2", "2M", "3R", "3B", "4"] as const;
export type LaserClass = (typeof LASER_CLASSES)[number];

/** The usual cautions per IEC 60825-1 class (common practice wording, not quoted from the standard). */
export function laserCaution(c: string | null | undefined): string | null {
  switch (c) {
    case "1":
      return "Class 1 laser: safe under foreseeable use.";
    case "1M":
      return "Class 1M laser: do not look into the beam through binoculars, a telescope or a level.";
    case "2":
      return "Class 2 laser: do not stare into the beam; the blink reflex protects only a brief glance.";
    case "2M":
      return "Class 2M laser: do not stare into the beam or view it through optics.";
    case "3R":
      return "Class 3R laser: avoid direct eye exposure; keep the beam off eye level and away from people and traffic.";
    case "3B":
      return "Class 3B laser: direct beam and mirror reflections are hazardous; trained operator, controlled area, eyewear as assessed.";
    case "4":
      return "Class 4 laser: eye, skin and fire hazard, also from diffuse reflections; controlled area and eyewear required.";
    default:
      return null;
  }
}

export type StatementFigures = {
  n: number;
  rmseMm: number | null;
  rmseCombinedMm: number | null;
  accuracy95Mm: number | null;
  referenceUnknownN: number;
};

export type AccuracyStatement = {
  style: Statement;
  /** What the screens lead with. */
  headline: "rmseCombined" | "rmse" | "accuracy95";
  headlineMm: number | null;
  headlineLabel: string;
  referenceIncluded: boolean;
  sentence: string;
};

const mm = (v: number) => `${v.toFixed(1)} mm`;
const shotsWord = (n: number) => `${n} check-shot${n === 1 ? "" : "s"}`;

/**
 * The accuracy statement of ranging.md §7: `rmse` (ASPRS Edition 2, RMSE only; the reference
 * included when its uncertainty is known) or `nssda95` (FGDC-STD-007.3-1998, 1.96 · RMSE).
 */
export function accuracyStatement(f: StatementFigures, style: Statement = "rmse"): AccuracyStatement {
  const unknownNote = f.referenceUnknownN > 0 ? `reference not included (its uncertainty is unknown for ${shotsWord(f.referenceUnknownN)})` : "reference not included";
  if (style === "nssda95") {
    const v = f.accuracy95Mm;
    return {
      style,
      headline: "accuracy95",
      headlineMm: v,
      headlineLabel: "Accuracy at 95 % (NSSDA, 1.96 · RMSE)",
      referenceIncluded: false,
      sentence: v == null ? `Not tested: no included check-shots.` : `Tested ${mm(v)} range accuracy at 95 % confidence level (NSSDA) against ${shotsWord(f.n)}, reference not included.`,
    };
  }
  if (f.rmseCombinedMm != null) {
    return {
      style,
      headline: "rmseCombined",
      headlineMm: f.rmseCombinedMm,
      headlineLabel: "RMSE, reference included",
      referenceIncluded: true,
      sentence: `Tested ${mm(f.rmseCombinedMm)} range RMSE against ${shotsWord(f.n)}, reference included.`,
    };
  }
  const v = f.rmseMm;
  return {
    style,
    headline: "rmse",
    headlineMm: v,
    headlineLabel: "RMSE",
    referenceIncluded: false,
    sentence: v == null ? `Not tested: no included check-shots.` : `Tested ${mm(v)} range RMSE against ${shotsWord(f.n)}, ${unknownNote}.`,
  };
}

/** The rule preset "ASPRS Edition 2": 30 check-shots at least, the reference in the verdict, RMSE statement. */
export const EDITION2_PRESET = { minShots: 30, referenceInVerdict: true, statement: "rmse" as Statement, referenceRatio: 2 };

/**
 * One session of a sensor's history from its sums over the included shots: bias = Σe/n,
 * RMSE = √(Σe²/n) (ranging.md §5), and whether the session's own date is past a certificate's due.
 */
export function sessionHistoryFigures(x: { n: number; sumErrorMm: number; sumErrorSqMm2: number }): { biasMm: number | null; rmseMm: number | null } {
  if (!(x.n > 0)) return { biasMm: null, rmseMm: null };
  return { biasMm: x.sumErrorMm / x.n, rmseMm: Math.sqrt(Math.max(0, x.sumErrorSqMm2) / x.n) };
}
