// issue 16: what the report charts draw at any number of shots. A chart of 100,000 marks takes
// a browser seconds to draw and reads no better than a few thousand, so the error-against-distance
// chart draws every shot that needs a look (excluded, outside its limit, flagged), a
// deterministic sample of the others per distance bin, and the full spread (min, max, count) of
// the others per bin as a band. This module is the definition; the server computes the same in
// SQL (app/models/report-series.server.ts) and its test compares the two over the full rows.

/** One shot as the chart reads it; `lim` is the report rule's limit k·T(D) (mm). */
export type SeriesRow = { id: string; d: number; e: number; lim: number; within: boolean; excluded: boolean; flagged: boolean };

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
 * The order of the sample within a bin: the last 12 characters of the id (the random part of
 * a UUID, v4 or v7), then the whole id. Ids are random, so the first m in this order are an
 * unbiased sample that is the same on every view; SQLite compares the same bytes.
 */
export function sampleKey(id: string): string {
  return id.slice(24);
}

export function compareSample(a: { id: string }, b: { id: string }): number {
  const ka = sampleKey(a.id);
  const kb = sampleKey(b.id);
  if (ka !== kb) return ka < kb ? -1 : 1;
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
    for (const r of list) {
      if (r.e < minE) minE = r.e;
      if (r.e > maxE) maxE = r.e;
    }
    binRows.push({ i, d0: dMin + i * width, d1: dMin + (i + 1) * width, n: list.length, minE, maxE });
    sample.push(...[...list].sort(compareSample).slice(0, perBin));
  }
  return { total: rows.length, notableTotal: notable.length, points: [...notable.slice(0, maxNotable), ...sample], bins: binRows, dMin, dMax };
}
