// issue 16: the chart series against a brute-force reading of every row (the properties the
// chart's caption promises), on a small invented set where the answers can be counted by hand.
import { expect, test } from "vitest";
import { binIndex, errorSeries, isNotable, sampleKey, type SeriesRow } from "./series.ts";

/** A deterministic pseudo-random stream (Park–Miller minimal standard generator, 1988). */
function lcg(seed: number) {
  let s = seed;
  return () => (s = (s * 16807) % 2147483647) / 2147483647;
}

function rows(n: number, seed = 7): SeriesRow[] {
  const r = lcg(seed);
  return Array.from({ length: n }, (_, i) => {
    const d = 2 + 98 * r();
    const e = (r() - 0.5) * 8 + (i % 97 === 0 ? 40 : 0);
    const lim = 2 * (3 + (5 * d) / 1000);
    const hex = Math.floor(r() * 2 ** 48)
      .toString(16)
      .padStart(12, "0");
    return { id: `00000000-0000-4000-8000-${hex}`, key: sampleKey(i + 1), d, e, lim, within: Math.abs(e) <= lim, excluded: i % 211 === 0, flagged: i % 331 === 0 };
  });
}

test("every excluded, outside-limit and flagged shot is drawn while they fit under the cap (counted directly)", () => {
  const all = rows(5000);
  const s = errorSeries(all, { bins: 20, perBin: 10 });
  const notable = all.filter((r) => r.excluded || !r.within || r.flagged);
  expect(notable.length).toBeGreaterThan(10);
  expect(s.notableTotal).toBe(notable.length);
  const drawn = new Set(s.points.map((p) => p.id));
  for (const r of notable) expect(drawn.has(r.id)).toBe(true);
  expect(s.total).toBe(5000);
  // the sample: at most perBin ordinary shots per bin
  expect(s.points.length).toBeLessThanOrEqual(notable.length + 20 * 10);
});

test("each bin's count, min and max are those of the ordinary shots in it (brute force)", () => {
  const all = rows(3000, 11);
  const s = errorSeries(all, { bins: 15, perBin: 5 });
  const lo = Math.min(...all.map((r) => r.d));
  const hi = Math.max(...all.map((r) => r.d));
  for (let i = 0; i < 15; i++) {
    const inBin = all.filter((r) => !isNotable(r) && Math.min(14, Math.floor(((r.d - lo) / (hi - lo)) * 15)) === i);
    const bin = s.bins.find((b) => b.i === i);
    if (!inBin.length) {
      expect(bin).toBeUndefined();
      continue;
    }
    expect(bin!.n).toBe(inBin.length);
    expect(bin!.minE).toBe(Math.min(...inBin.map((r) => r.e)));
    expect(bin!.maxE).toBe(Math.max(...inBin.map((r) => r.e)));
    // the bin's frame holds its shots
    for (const r of inBin) {
      expect(r.d).toBeGreaterThanOrEqual(bin!.d0 - 1e-9);
      expect(r.d).toBeLessThanOrEqual(bin!.d1 + 1e-9);
    }
  }
  expect(s.bins.reduce((a, b) => a + b.n, 0) + s.notableTotal).toBe(all.length);
});

test("the sample is the same whatever order the rows come in, and each sampled shot is an ordinary one of its bin", () => {
  const all = rows(2000, 5);
  const a = errorSeries(all, { bins: 10, perBin: 8 });
  const b = errorSeries([...all].reverse(), { bins: 10, perBin: 8 });
  expect(b.points.map((p) => p.id).sort()).toEqual(a.points.map((p) => p.id).sort());
  const sampled = a.points.filter((p) => !isNotable(p));
  const perBin = new Map<number, number>();
  for (const p of sampled) perBin.set(binIndex(p.d, a.dMin, a.dMax, 10), (perBin.get(binIndex(p.d, a.dMin, a.dMax, 10)) ?? 0) + 1);
  for (const [i, n] of perBin) expect(n).toBe(Math.min(8, a.bins.find((x) => x.i === i)!.n));
});

test("beyond the cap, the notable shots with the largest |error| stay, and the count still tells all of them", () => {
  const all = rows(4000, 3).map((r, i) => (i < 500 ? { ...r, within: false, e: r.e + (r.e < 0 ? -20 : 20) } : r));
  const s = errorSeries(all, { maxNotable: 100 });
  const notable = all.filter(isNotable).sort((p, q) => Math.abs(q.e) - Math.abs(p.e));
  expect(s.notableTotal).toBe(notable.length);
  const drawnNotable = s.points.filter(isNotable);
  expect(drawnNotable).toHaveLength(100);
  const smallestDrawn = Math.min(...drawnNotable.map((p) => Math.abs(p.e)));
  expect(smallestDrawn).toBe(Math.abs(notable[99]!.e));
});

test("the sample key scatters consecutive row numbers over 32 bits (Knuth's multiplicative hash)", () => {
  // 1 × 0x9e3779b9 = 2654435769 (Knuth's constant itself); 2 × it mod 2³² = 1013904242
  expect(sampleKey(1)).toBe(2654435769);
  expect(sampleKey(2)).toBe(1013904242);
  const keys = Array.from({ length: 1000 }, (_, i) => sampleKey(i + 1));
  expect(new Set(keys).size).toBe(1000);
  // the first tenth in key order comes from all over the numbering, not from its start
  const first = [...keys.keys()].sort((a, b) => keys[a]! - keys[b]!).slice(0, 100);
  expect(Math.max(...first)).toBeGreaterThan(800);
  expect(Math.min(...first)).toBeLessThan(200);
});

test("no shots, one distance: empty and single-bin series", () => {
  expect(errorSeries([])).toMatchObject({ total: 0, points: [], bins: [] });
  const one = errorSeries([{ id: "a", key: 1, d: 10, e: 1, lim: 5, within: true, excluded: false, flagged: false }]);
  expect(one.bins).toEqual([{ i: 0, d0: 10, d1: 10, n: 1, minE: 1, maxE: 1 }]);
  expect(binIndex(10, 10, 10)).toBe(0);
});
