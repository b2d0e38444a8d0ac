// issue 16 (v16): the columns' computation against the definition (errorSeries, seriesCells,
// includedTotals over one object per shot), on invented sets with ties in |error|, excluded,
// wrapped, outlying and retro shots and missing reflectance or illuminance.
import { expect, test } from "vitest";
import { errorSeries, includedTotals, sampleKey, seriesCells, type SeriesRow } from "./series.ts";
import { rowId, seriesOfColumns, type SeriesColumns } from "./series-columns.ts";

/** A deterministic pseudo-random stream (Park–Miller minimal standard generator, 1988). */
function lcg(seed: number) {
  let s = seed;
  return () => (s = (s * 16807) % 2147483647) / 2147483647;
}

function columns(n: number, seed: number): SeriesColumns & { rowNumber: number[]; d: number[]; e: number[] } {
  const r = lcg(seed);
  const c = {
    rowNumber: [] as number[],
    d: [] as number[],
    e: [] as number[],
    excluded: [] as number[],
    retro: [] as number[],
    wrap: [] as number[],
    reflectancePct: [] as (number | null)[],
    illuminanceKlux: [] as (number | null)[],
  };
  for (let i = 0; i < n; i++) {
    // row numbers with gaps, not in order (rows deleted with their sensor, shots synced late)
    c.rowNumber.push(1 + ((i * 7919) % (3 * n)));
    c.d.push(2 + Math.round(r() * 1500) / 10);
    // errors rounded to 0.5 mm, both signs: many ties in |error|
    c.e.push(Math.round((r() - 0.5) * 24) / 2 + (i % 89 === 0 ? 40 : 0));
    c.excluded.push(i % 53 === 0 ? 1 : 0);
    c.retro.push(i % 7 === 0 ? 1 : 0);
    c.wrap.push(i % 101 === 0 ? 1 : 0);
    c.reflectancePct.push(i % 31 === 0 ? null : [5, 18, 50, 85, 90][i % 5]!);
    c.illuminanceKlux.push(i % 37 === 0 ? null : Math.round(r() * 100));
  }
  return c;
}

for (const [n, sizes] of [
  [4000, {}],
  [3000, { bins: 7, perBin: 3, maxNotable: 25 }],
  [1, {}],
  [0, {}],
] as const) {
  test(`${n} shots${Object.keys(sizes).length ? " (small bins and cap)" : ""}: the columns give the definition's series, cells and totals`, () => {
    const c = columns(n, 17 + n);
    const k = 2;
    const limitAt = (d: number) => k * (3 + (5 * d) / 1000);
    const outlier = n ? { medianMm: 0.5, cutMm: 9 } : null;
    const got = seriesOfColumns(c, { coverageK: k, limitAt, outlier, ...sizes });
    const rows = c.e.map((e, i) => {
      const lim = limitAt(c.d[i]!);
      const out = outlier != null && Math.abs(e - outlier.medianMm) > outlier.cutMm;
      return {
        id: rowId(c.rowNumber[i]!),
        key: sampleKey(c.rowNumber[i]!),
        d: c.d[i]!,
        e,
        lim,
        within: Math.abs(e) <= lim,
        excluded: c.excluded[i] === 1,
        flagged: out || c.wrap[i] === 1,
        retro: c.retro[i] === 1,
        reflectancePct: c.reflectancePct[i]!,
        illuminanceKlux: c.illuminanceKlux[i]!,
        out,
        wrap: c.wrap[i] === 1,
      };
    });
    const want = errorSeries(rows, sizes);
    const slim = (p: SeriesRow) => [p.id, p.key, p.d, p.e, p.lim, p.within, p.excluded, p.flagged];
    expect(got.series.points.map(slim)).toEqual(want.points.map(slim));
    expect(got.series.bins).toEqual(want.bins);
    expect([got.series.total, got.series.notableTotal, got.series.dMin, got.series.dMax]).toEqual([want.total, want.notableTotal, want.dMin, want.dMax]);
    expect(got.cells).toEqual(seriesCells(rows));
    expect(got.included).toEqual(includedTotals(rows, k));
    // the flagged included shots, largest |error| first (ties by id), and why
    const flagged = rows
      .filter((r) => !r.excluded && r.flagged)
      .sort((a, b) => Math.abs(b.e) - Math.abs(a.e) || (a.id < b.id ? -1 : 1))
      .map((r) => [r.id, r.out, r.wrap]);
    expect(got.flagged.map((f) => [rowId(c.rowNumber[f.i]!), f.outlier, f.wrap])).toEqual(flagged);
    if (n > 100) {
      expect(want.points.length).toBeLessThan(n);
      expect(flagged.length).toBeGreaterThan(0);
    }
  });
}
