// Reflectance × illuminance cells of the included shots: n and bias per cell, with the
// classes and the mean taken from the ranging core (never re-derived here).
import { illuminanceBand, mean, reflectanceClass } from "~/domain";
import type { ReportShotRow, ShotDetail } from "./report";

export const REFLECTANCE_ORDER = ["dark", "mid", "bright", "retro"] as const;
export const ILLUMINANCE_ORDER = ["low", "moderate", "high"] as const;

export type MatrixCell = {
  reflectance: (typeof REFLECTANCE_ORDER)[number];
  illuminance: (typeof ILLUMINANCE_ORDER)[number];
  n: number;
  biasMm: number;
  outside: number;
};

export function matrixCells(rows: ReportShotRow[], details: Map<string, ShotDetail>): MatrixCell[] {
  const groups = new Map<string, { r: MatrixCell["reflectance"]; i: MatrixCell["illuminance"]; e: number[]; outside: number }>();
  for (const row of rows) {
    if (row.excluded) continue;
    const d = details.get(row.id);
    if (!d || d.reflectancePct == null || d.illuminanceKlux == null) continue;
    const r = reflectanceClass(d.reflectancePct, d.retro);
    const i = illuminanceBand(d.illuminanceKlux);
    const key = `${r}|${i}`;
    let g = groups.get(key);
    if (!g) groups.set(key, (g = { r, i, e: [], outside: 0 }));
    g.e.push(row.errorMm);
    if (!row.within) g.outside++;
  }
  return [...groups.values()].map((g) => ({ reflectance: g.r, illuminance: g.i, n: g.e.length, biasMm: mean(g.e), outside: g.outside }));
}

/** The cell the QA lead should look at first: the largest |bias| among cells with ≥ 3 shots. */
export function worstCell(cells: MatrixCell[], minN = 3): MatrixCell | null {
  let best: MatrixCell | null = null;
  for (const c of cells) {
    if (c.n < minN) continue;
    if (!best || Math.abs(c.biasMm) > Math.abs(best.biasMm)) best = c;
  }
  return best;
}
