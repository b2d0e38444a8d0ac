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

/** Runs one step of a profile script and prints its wall and CPU time. */
export async function step<T>(what: string, f: () => Promise<T> | T): Promise<T> {
  const c = process.cpuUsage();
  const t = performance.now();
  const v = await f();
  const cpu = process.cpuUsage(c);
  console.log(`${what.padEnd(44)} ${(performance.now() - t).toFixed(1).padStart(8)} ms wall ${((cpu.user + cpu.system) / 1000).toFixed(1).padStart(8)} ms CPU`);
  return v;
}
