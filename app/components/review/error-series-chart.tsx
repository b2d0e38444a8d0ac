// issue 16: the error-against-distance chart over the server's series (every flagged shot, a
// fixed sample of the others, the spread per distance bin), drawn with Observable Plot.
import { baseStyle, captionClass, figureClass, LegendSwatch, marginForValues, PlotBox, type ErrorSeriesJson } from "./charts";
import type { SeriesRow } from "~/domain/series";

/**
 * issue 16: the chart from the server's series: every excluded, outside-limit or flagged shot, a
 * sample of the others, and the others' spread per distance bin as a band; the caption says how
 * many of the shots are drawn.
 */
export function ErrorSeriesChart({ series, zeroOffsetMm, scalePpm, legendBeside }: { series: ErrorSeriesJson; zeroOffsetMm: number | null; scalePpm: number | null; legendBeside?: boolean }) {
  const pts = series.points;
  const height = legendBeside ? 300 : 360;
  const drawn = pts.length;
  const notableDrawn = Math.min(series.notableTotal, pts.filter((p) => p.excluded || !p.within || p.flagged).length);
  const sampled = drawn < series.total;
  return (
    <figure className={figureClass(legendBeside)} data-testid="error-chart" data-drawn={drawn} data-total={series.total}>
      <PlotBox
        label={`Range error against reference distance: ${drawn} of ${series.total} shots drawn, with the plus and minus limit envelope and the fitted zero offset and scale line`}
        height={height}
        deps={[series, zeroOffsetMm, scalePpm, height]}
        build={(P, width, c) => {
          const env = series.limitLine;
          const maxD = series.dMax || 1;
          const fit = zeroOffsetMm != null && scalePpm != null ? [0, maxD].map((d) => ({ d, e: zeroOffsetMm + (scalePpm * d) / 1000 })) : [];
          const inc = pts.filter((r) => !r.excluded);
          return P.plot({
            width,
            height,
            marginLeft: marginForValues([...pts.map((r) => r.e), ...series.bins.flatMap((b) => [b.minE, b.maxE]), ...env.map((r) => r.lim)]),
            marginBottom: 46,
            style: baseStyle(c),
            x: { label: "Reference distance (m) →", grid: true, nice: true, zero: true, labelOffset: 40 },
            y: { label: "↑ Range error (mm, + reads long)", grid: true, nice: true },
            marks: [
              P.areaY(env, { x: "d", y1: (r: { lim: number }) => -r.lim, y2: "lim", fill: c.accent, fillOpacity: 0.12 }),
              P.line(env, { x: "d", y: "lim", stroke: c.accent, strokeDasharray: "6,4", strokeWidth: 2 }),
              P.line(env, { x: "d", y: (r: { lim: number }) => -r.lim, stroke: c.accent, strokeDasharray: "6,4", strokeWidth: 2 }),
              sampled ? P.rect(series.bins, { x1: "d0", x2: "d1", y1: "minE", y2: "maxE", fill: c.pass, fillOpacity: 0.22 }) : null,
              P.ruleY([0], { stroke: c.muted }),
              P.dot(
                pts.filter((r) => r.excluded),
                { x: "d", y: "e", symbol: "square", stroke: c.muted, fill: "none", r: 5, strokeWidth: 2 },
              ),
              P.dot(
                inc.filter((r) => r.within && !r.flagged),
                { x: "d", y: "e", symbol: "circle", fill: c.pass, r: sampled ? 3.5 : 4.5 },
              ),
              P.dot(
                inc.filter((r) => r.within && r.flagged),
                { x: "d", y: "e", symbol: "diamond", stroke: c.warn, fill: "none", r: 6, strokeWidth: 2 },
              ),
              P.dot(
                inc.filter((r) => !r.within),
                { x: "d", y: "e", symbol: "triangle", fill: c.fail, r: 6 },
              ),
              // the fit over the dots (under a sample of 1,800 of them it could not be seen)
              fit.length ? P.line(fit, { x: "d", y: "e", stroke: c.warn, strokeWidth: 3 }) : null,
              P.tip(pts, P.pointer({ x: "d", y: "e", title: (r: SeriesRow) => `${r.d.toFixed(3)} m\nerror ${r.e.toFixed(2)} mm\nlimit ±${r.lim.toFixed(2)} mm` })),
            ],
          });
        }}
      />
      <figcaption className={captionClass(legendBeside)}>
        <span className="w-full font-bold" data-testid="drawn-note">
          {sampled
            ? `${drawn.toLocaleString("en-US")} of ${series.total.toLocaleString("en-US")} shots drawn: ${notableDrawn === series.notableTotal ? (series.notableTotal === 1 ? "the one" : `all ${series.notableTotal.toLocaleString("en-US")}`) : `the ${notableDrawn.toLocaleString("en-US")} largest of ${series.notableTotal.toLocaleString("en-US")}`} excluded, outside-limit or flagged shot${series.notableTotal === 1 ? "" : "s"}, and a fixed sample of the others (the same on every view).`
            : `All ${series.total.toLocaleString("en-US")} shots drawn.`}
        </span>
        <span>
          <LegendSwatch shape="circle" color="var(--pass)" /> within limit{sampled ? " (sample)" : ""}
        </span>
        <span>
          <LegendSwatch shape="triangle" color="var(--fail)" /> outside limit
        </span>
        <span>
          <LegendSwatch shape="diamond" color="var(--warn)" hollow /> flagged (outlier, wrap)
        </span>
        <span>
          <LegendSwatch shape="square" color="var(--muted)" hollow /> excluded
        </span>
        {sampled ? (
          <span>
            <span className="inline-block h-3 w-6 bg-pass align-middle opacity-30" /> spread of the shots within limit, per distance bin (all of them)
          </span>
        ) : null}
        <span>
          <span className="inline-block h-0 w-6 border-t-2 border-dashed border-accent align-middle" /> ± limit (k × tolerance, mm)
        </span>
        <span>
          <span className="inline-block h-0 w-6 border-t-4 border-warn align-middle" /> fit: zero offset + scale × D
        </span>
      </figcaption>
    </figure>
  );
}
