// Number formatting for the review screens: units always shown, "—" for a figure that
// cannot be computed (null on the wire).
import type { TestName } from "./types";
import { BRIGHT_ABOVE_PCT, DARK_BELOW_PCT } from "~/domain";

export function num(v: number | null | undefined, digits = 1): string {
  if (v == null || !Number.isFinite(v)) return "—";
  return v.toFixed(digits);
}

/** Signed, with a real minus sign so "−" and "+" line up in tabular figures. */
export function signed(v: number | null | undefined, digits = 1): string {
  if (v == null || !Number.isFinite(v)) return "—";
  const s = Math.abs(v).toFixed(digits);
  if (Number(s) === 0) return s;
  return (v < 0 ? "−" : "+") + s;
}

export function withUnit(text: string, unit: string) {
  return text === "—" ? text : `${text} ${unit}`;
}

export const mm = (v: number | null | undefined, digits = 1) => withUnit(num(v, digits), "mm");
export const mmSigned = (v: number | null | undefined, digits = 1) => withUnit(signed(v, digits), "mm");
export const pct = (v: number | null | undefined, digits = 1) => withUnit(num(v, digits), "%");
export const metres = (v: number | null | undefined, digits = 3) => withUnit(num(v, digits), "m");

export function dateTime(iso: string | null | undefined): string {
  if (!iso) return "—";
  const d = new Date(iso);
  if (Number.isNaN(d.getTime())) return iso;
  return d.toISOString().slice(0, 16).replace("T", " ") + " UTC";
}

/** "+02:00" for an offset in minutes east of UTC. */
export function offsetText(minutesEast: number): string {
  const a = Math.abs(minutesEast);
  return `${minutesEast < 0 ? "−" : "+"}${String(Math.floor(a / 60)).padStart(2, "0")}:${String(a % 60).padStart(2, "0")}`;
}

/** The device's local date and time with its offset, e.g. "2026-05-05 13:07 UTC+02:00" (browser only: the server does not know the reader's zone). */
export function localDateTime(iso: string | null | undefined): string {
  if (!iso) return "—";
  const d = new Date(iso);
  if (Number.isNaN(d.getTime())) return iso;
  const p = (n: number) => String(n).padStart(2, "0");
  return `${d.getFullYear()}-${p(d.getMonth() + 1)}-${p(d.getDate())} ${p(d.getHours())}:${p(d.getMinutes())} UTC${offsetText(-d.getTimezoneOffset())}`;
}

export function dateOnly(iso: string | null | undefined): string {
  if (!iso) return "—";
  return iso.slice(0, 10);
}

export const TEST_WORDS: Record<TestName, { title: string; rule: string }> = {
  count: { title: "Shot count", rule: "at least" },
  within: { title: "Share within limit", rule: "at least" },
  bias: { title: "Bias", rule: "|bias| at most" },
  precision: { title: "Precision (SD)", rule: "at most" },
  // issue 15 (ranging.md §7): advisory unless the rule puts it in the verdict
  reference: { title: "Reference accuracy", rule: "RMS u_ref at most" },
};

/** A test's value and limit in its unit: shots, %, mm. */
export function testValue(name: TestName, v: number | null): string {
  if (name === "count") return v == null ? "—" : `${v} shots`;
  if (name === "within") return pct(v);
  if (name === "bias") return mmSigned(v, 2);
  return mm(v, 2);
}

export function testLimit(name: TestName, v: number): string {
  if (name === "count") return `${v} shots`;
  if (name === "within") return pct(v);
  if (name === "bias") return `±${num(v, 2)} mm`;
  return mm(v, 2);
}

export const BAND_WORDS: Record<string, string> = {
  dark: `Dark (< ${DARK_BELOW_PCT} %)`,
  mid: `Mid (${DARK_BELOW_PCT}–${BRIGHT_ABOVE_PCT} %)`,
  bright: `Bright (> ${BRIGHT_ABOVE_PCT} %)`,
  retro: "Retro-reflective",
  low: "Low (< 10 klux)",
  moderate: "Moderate (10–50 klux)",
  high: "High (≥ 50 klux, bright sun)",
};

export function bandWord(band: string) {
  return BAND_WORDS[band] ?? `${band} m`;
}
