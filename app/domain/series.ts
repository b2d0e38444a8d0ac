// issue 16: what the report charts draw at any number of shots. A chart of 100,000 marks takes
// a browser seconds to draw and reads no better than a few thousand, so the error-against-distance
// chart draws every shot that needs a look (excluded, outside its limit, flagged), a
// deterministic sample of the others per distance bin, and the full spread (min, max, count) of
// the others per bin as a band. This module is the definition, and the server runs it over the
// selection's columns read in one query (app/models/report-series.server.ts).
import { illuminanceBand, reflectanceClass } from "./coverage.ts";
import type { IlluminanceBand, ReflectanceClass } from "./types.ts";
import type { IncludedTotals } from "./explain.ts";
import { mean } from "./stats.ts";

/**
 * One shot as the chart reads it; `lim` is the report rule's limit k·T(D) (mm); `key` orders the
 * sample (sampleKey of the shot's row number: the server reads it from an index, the id not).
 */
export type SeriesRow = { id: string; key: number; d: number; e: number; lim: number; within: boolean; excluded: boolean; flagged: boolean };

/** The spread of the shots not drawn one by one, per distance bin. */
export type SeriesBin = { i: number; d0: number; d1: number; n: number; minE: number; maxE: number };

export type ErrorSeries = {
  /** Every shot of the selection. */
  total: number;
  /** Shots needing a look (excluded, outside, flagged): all of them drawn up to `maxNotable`. */
  notableTotal: number;
  points: SeriesRow[];
  bins: SeriesBin[];
  /** Distance range of the selection (m), the bins' frame. */
  dMin: number;
  dMax: number;
};

export const SERIES_BINS = 60;
/** Sampled ordinary shots per bin: 60 × 30 = 1,800 at most. */
export const SERIES_PER_BIN = 30;
/** Notable shots drawn at most (beyond, the largest |error| first; the caption says how many). */
export const SERIES_MAX_NOTABLE = 3000;

export const isNotable = (r: Pick<SeriesRow, "within" | "excluded" | "flagged">) => r.excluded || !r.within || r.flagged;

/** Bin of a distance in [dMin, dMax] split into `bins` equal parts (the last one closed). */
export function binIndex(d: number, dMin: number, dMax: number, bins = SERIES_BINS): number {
  if (!(dMax > dMin)) return 0;
  return Math.min(bins - 1, Math.max(0, Math.floor(((d - dMin) / (dMax - dMin)) * bins)));
}

/**
 * The order of the sample within a bin: a multiplicative hash of the shot's row number (Knuth,
 * TAOCP vol. 3 §6.4: × 2654435769 = 0x9e3779b9, the golden ratio of 2³², kept to 32 bits). Rows
 * are numbered as they arrive, the hash scatters them, so the first m in this order are a sample
 * spread over time that is the same on every view.
 */
export function sampleKey(rowNumber: number): number {
  return Math.imul(rowNumber | 0, 0x9e3779b9) >>> 0;
}

export function compareSample(a: { key: number; id: string }, b: { key: number; id: string }): number {
  if (a.key !== b.key) return a.key - b.key;
  return a.id < b.id ? -1 : a.id > b.id ? 1 : 0;
}

/** Largest |error| first, then id: which notable shots stay when there are more than can be drawn. */
export function compareNotable(a: SeriesRow, b: SeriesRow): number {
  const d = Math.abs(b.e) - Math.abs(a.e);
  if (d !== 0) return d;
  return a.id < b.id ? -1 : a.id > b.id ? 1 : 0;
}

/** The chart series of a selection's shots, computed over every row (the definition). */
export function errorSeries(rows: readonly SeriesRow[], opts: { bins?: number; perBin?: number; maxNotable?: number } = {}): ErrorSeries {
  const bins = opts.bins ?? SERIES_BINS;
  const perBin = opts.perBin ?? SERIES_PER_BIN;
  const maxNotable = opts.maxNotable ?? SERIES_MAX_NOTABLE;
  let dMin = Infinity;
  let dMax = -Infinity;
  for (const r of rows) {
    if (r.d < dMin) dMin = r.d;
    if (r.d > dMax) dMax = r.d;
  }
  if (!rows.length) return { total: 0, notableTotal: 0, points: [], bins: [], dMin: 0, dMax: 0 };
  const notable = rows.filter(isNotable).sort(compareNotable);
  const rest = new Map<number, SeriesRow[]>();
  for (const r of rows) {
    if (isNotable(r)) continue;
    const i = binIndex(r.d, dMin, dMax, bins);
    let list = rest.get(i);
    if (!list) rest.set(i, (list = []));
    list.push(r);
  }
  const width = (dMax - dMin) / bins;
  const binRows: SeriesBin[] = [];
  const sample: SeriesRow[] = [];
  for (const i of [...rest.keys()].sort((a, b) => a - b)) {
    const list = rest.get(i)!;
    let minE = Infinity;
    let maxE = -Infinity;
    // the first perBin in sample order, kept sorted while walking the bin once (no sort of the bin)
    const keep: SeriesRow[] = [];
    for (const r of list) {
      if (r.e < minE) minE = r.e;
      if (r.e > maxE) maxE = r.e;
      if (keep.length === perBin && compareSample(r, keep[perBin - 1]!) >= 0) continue;
      let at = keep.length;
      while (at > 0 && compareSample(r, keep[at - 1]!) < 0) at--;
      keep.splice(at, 0, r);
      if (keep.length > perBin) keep.pop();
    }
    binRows.push({ i, d0: dMin + i * width, d1: dMin + (i + 1) * width, n: list.length, minE, maxE });
    sample.push(...keep);
  }
  return { total: rows.length, notableTotal: notable.length, points: [...notable.slice(0, maxNotable), ...sample], bins: binRows, dMin, dMax };
}

/** A shot as the reflectance × illuminance cells and the verdict's totals read it. */
export type CellRow = { e: number; lim: number; within: boolean; excluded: boolean; reflectancePct: number | null; retro: boolean; illuminanceKlux: number | null };

export type SeriesCell = { reflectance: ReflectanceClass; illuminance: IlluminanceBand; n: number; biasMm: number; outside: number };

/** Per reflectance class × illuminance band of the included shots: count, bias (mean error), count outside the limit. */
export function seriesCells(rows: readonly CellRow[]): SeriesCell[] {
  const groups = new Map<string, { r: ReflectanceClass; i: IlluminanceBand; e: number[]; outside: number }>();
  for (const row of rows) {
    if (row.excluded || row.reflectancePct == null || row.illuminanceKlux == null) continue;
    const r = reflectanceClass(row.reflectancePct, row.retro);
    const i = illuminanceBand(row.illuminanceKlux);
    const key = `${r}|${i}`;
    let g = groups.get(key);
    if (!g) groups.set(key, (g = { r, i, e: [], outside: 0 }));
    g.e.push(row.e);
    if (!row.within) g.outside++;
  }
  return [...groups.values()].map((g) => ({ reflectance: g.r, illuminance: g.i, n: g.e.length, biasMm: mean(g.e), outside: g.outside }));
}

/** n, Σe, Σe², within and ΣT(D) (= Σ limit / k) of the included shots: what explainVerdict needs beside the flagged rows. */
export function includedTotals(rows: readonly Pick<CellRow, "e" | "lim" | "within" | "excluded">[], coverageK: number): IncludedTotals {
  let n = 0;
  let sumMm = 0;
  let sumSqMm2 = 0;
  let within = 0;
  let sumTMm = 0;
  for (const r of rows) {
    if (r.excluded) continue;
    n++;
    sumMm += r.e;
    sumSqMm2 += r.e * r.e;
    if (r.within) within++;
    sumTMm += r.lim / coverageK;
  }
  return { n, sumMm, sumSqMm2, within, sumTMm };
}
