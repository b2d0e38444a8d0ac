// The one format of a target line in `npm run bench` (issue 16): what is promised, the figure
// measured, and "met" or "NOT met". run.ts gathers these lines into the summary at the end.
export const MET = "met";
export const NOT_MET = "NOT met";

export function target(what: string, figure: string, met: boolean): string {
  return `  TARGET ${what}: ${figure} — ${met ? MET : NOT_MET}`;
}

/** A target line, as target() writes it (for the summary). */
export const isTargetLine = (line: string) => /^\s*TARGET .* — (met|NOT met)$/.test(line);

export const fmt = (n: number, d = 0) => n.toLocaleString("en-GB", { maximumFractionDigits: d, minimumFractionDigits: d });

/** Type 7 (linear between order statistics, R's default) of an ascending list. */
export function quantile(sorted: number[], p: number): number {
  if (!sorted.length) return NaN;
  const h = (sorted.length - 1) * p;
  const lo = Math.floor(h);
  return sorted[lo]! + (h - lo) * ((sorted[Math.min(lo + 1, sorted.length - 1)] ?? sorted[lo]!) - sorted[lo]!);
}
