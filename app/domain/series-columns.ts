// issue 16 (v16): the same series, cells and verdict totals as errorSeries, seriesCells and
// includedTotals (series.ts, the definition), computed over the selection's COLUMNS instead of one
// object per shot. At 100,000 shots the objects (and the garbage they leave) were most of the
// series route's CPU; here a shot is an index into typed arrays and only the few thousand shots
// drawn become objects. series-columns.test.ts checks it equals the definition row for row.
import { illuminanceBand, reflectanceClass } from "./coverage.ts";
import type { IncludedTotals } from "./explain.ts";
import { binIndex, SERIES_BINS, SERIES_MAX_NOTABLE, SERIES_PER_BIN, sampleKey, type ErrorSeries, type SeriesBin, type SeriesCell, type SeriesRow } from "./series.ts";
import { mean } from "./stats.ts";
import type { IlluminanceBand, ReflectanceClass } from "./types.ts";

/** One selection, column by column; shot i is index i of every column. */
export type SeriesColumns = {
  /** The row number of each shot (positive integers): the sample's key and the ties' order. */
  rowNumber: ArrayLike<number>;
  /** Reference distance (m). */
  d: ArrayLike<number>;
  /** Range error (mm). */
  e: ArrayLike<number>;
  excluded: ArrayLike<boolean | number>;
  retro: ArrayLike<boolean | number>;
  wrap: ArrayLike<boolean | number>;
  reflectancePct: ArrayLike<number | null>;
  illuminanceKlux: ArrayLike<number | null>;
};

export type ColumnsOptions = {
  coverageK: number;
  /** The report rule's limit k·T(D) at a distance (mm). */
  limitAt: (d: number) => number;
  /** The outlier rule's median and cut (ranging.md §4) over the included shots; null without any. */
  outlier: { medianMm: number; cutMm: number } | null;
  bins?: number;
  perBin?: number;
  maxNotable?: number;
};

/** The row number as the definition's id: zero-padded, so text order is number order. */
export const rowId = (rowNumber: number) => String(rowNumber).padStart(16, "0");

export type ColumnsSeries = {
  series: ErrorSeries;
  /** Index of each drawn point, in the order of series.points. */
  pointIndex: number[];
  /** Included shots flagged (outlier or wrap), largest |error| first: their indices, and why. */
  flagged: { i: number; outlier: boolean; wrap: boolean }[];
  /** Per shot: the limit, and whether it is within it. */
  lim: Float64Array;
  within: Uint8Array;
  cells: SeriesCell[];
  included: IncludedTotals;
};

export function seriesOfColumns(c: SeriesColumns, o: ColumnsOptions): ColumnsSeries {
  const n = c.e.length;
  const bins = o.bins ?? SERIES_BINS;
  const perBin = o.perBin ?? SERIES_PER_BIN;
  const maxNotable = o.maxNotable ?? SERIES_MAX_NOTABLE;
  const lim = new Float64Array(n);
  const within = new Uint8Array(n);
  const isOutlier = new Uint8Array(n);
  const notable: number[] = [];
  let dMin = Infinity;
  let dMax = -Infinity;
  const included: IncludedTotals = { n: 0, sumMm: 0, sumSqMm2: 0, within: 0, sumTMm: 0 };
  const groups = new Map<string, { r: ReflectanceClass; i: IlluminanceBand; e: number[]; outside: number }>();
  for (let i = 0; i < n; i++) {
    const d = c.d[i]!;
    const e = c.e[i]!;
    if (d < dMin) dMin = d;
    if (d > dMax) dMax = d;
    const l = o.limitAt(d);
    lim[i] = l;
    const w = Math.abs(e) <= l;
    within[i] = w ? 1 : 0;
    const out = o.outlier != null && Math.abs(e - o.outlier.medianMm) > o.outlier.cutMm;
    isOutlier[i] = out ? 1 : 0;
    const excluded = !!c.excluded[i];
    if (excluded || !w || out || c.wrap[i]) notable.push(i);
    if (excluded) continue;
    included.n++;
    included.sumMm += e;
    included.sumSqMm2 += e * e;
    if (w) included.within++;
    included.sumTMm += l / o.coverageK;
    const rp = c.reflectancePct[i];
    const lux = c.illuminanceKlux[i];
    if (rp == null || lux == null) continue;
    const r = reflectanceClass(rp, !!c.retro[i]);
    const ib = illuminanceBand(lux);
    const key = `${r}|${ib}`;
    let g = groups.get(key);
    if (!g) groups.set(key, (g = { r, i: ib, e: [], outside: 0 }));
    g.e.push(e);
    if (!w) g.outside++;
  }
  const cells = [...groups.values()].map((g) => ({ reflectance: g.r, illuminance: g.i, n: g.e.length, biasMm: mean(g.e), outside: g.outside }));
  const rn = c.rowNumber;
  // largest |error| first, then the row number (compareNotable over the padded ids)
  const byNotable = (a: number, b: number) => Math.abs(c.e[b]!) - Math.abs(c.e[a]!) || rn[a]! - rn[b]!;
  notable.sort(byNotable);
  const flagged = notable.filter((i) => !c.excluded[i] && (isOutlier[i] || c.wrap[i])).map((i) => ({ i, outlier: isOutlier[i] === 1, wrap: !!c.wrap[i] }));
  const total = n;
  if (!n) {
    return { series: { total: 0, notableTotal: 0, points: [], bins: [], dMin: 0, dMax: 0 }, pointIndex: [], flagged, lim, within, cells, included };
  }
  // the ordinary shots per bin: count, spread and the first perBin in sample order (key, then row number)
  const isNotable = new Uint8Array(n);
  for (const i of notable) isNotable[i] = 1;
  const count = new Float64Array(bins);
  const minE = new Float64Array(bins).fill(Infinity);
  const maxE = new Float64Array(bins).fill(-Infinity);
  const keep: number[][] = Array.from({ length: bins }, () => []);
  const keys = new Float64Array(n);
  const before = (a: number, b: number) => keys[a]! - keys[b]! || rn[a]! - rn[b]!;
  for (let i = 0; i < n; i++) {
    if (isNotable[i]) continue;
    const b = binIndex(c.d[i]!, dMin, dMax, bins);
    const e = c.e[i]!;
    count[b]!++;
    if (e < minE[b]!) minE[b] = e;
    if (e > maxE[b]!) maxE[b] = e;
    keys[i] = sampleKey(rn[i]!);
    const k = keep[b]!;
    if (k.length === perBin && before(i, k[perBin - 1]!) >= 0) continue;
    let at = k.length;
    while (at > 0 && before(i, k[at - 1]!) < 0) at--;
    k.splice(at, 0, i);
    if (k.length > perBin) k.pop();
  }
  const width = (dMax - dMin) / bins;
  const binRows: SeriesBin[] = [];
  const sample: number[] = [];
  for (let b = 0; b < bins; b++) {
    if (!count[b]) continue;
    binRows.push({ i: b, d0: dMin + b * width, d1: dMin + (b + 1) * width, n: count[b]!, minE: minE[b]!, maxE: maxE[b]! });
    sample.push(...keep[b]!);
  }
  const pointIndex = [...notable.slice(0, maxNotable), ...sample];
  const points: SeriesRow[] = pointIndex.map((i) => ({
    id: rowId(rn[i]!),
    key: sampleKey(rn[i]!),
    d: c.d[i]!,
    e: c.e[i]!,
    lim: lim[i]!,
    within: within[i] === 1,
    excluded: !!c.excluded[i],
    flagged: isOutlier[i] === 1 || !!c.wrap[i],
  }));
  return { series: { total, notableTotal: notable.length, points, bins: binRows, dMin, dMax }, pointIndex, flagged, lim, within, cells, included };
}
