// Report charts drawn with Observable Plot in the browser (loaded on demand, so the server
// render and other pages never carry it). Each chart has a legend and its units.
import { useEffect, useRef, useState } from "react";
import type { MatrixCell } from "./matrix";
import { ILLUMINANCE_ORDER, REFLECTANCE_ORDER } from "./matrix";
import type { DriftRow, ReportJson, ReportShotRow } from "./types";
import type { ErrorSeries } from "~/domain/series";

/** issue 16: the error-against-distance series the server sends (app/models/report-series.server.ts). */
export type ErrorSeriesJson = ErrorSeries & { limitLine: { d: number; lim: number }[] };
import { bandWord, offsetText } from "./format";

export type PlotModule = typeof import("@observablehq/plot");
export type Palette = { fg: string; muted: string; pass: string; fail: string; warn: string; accent: string; bg: string; line: string };

function palette(el: Element): Palette {
  const s = getComputedStyle(el);
  const v = (n: string) => s.getPropertyValue(n).trim();
  return { fg: v("--fg"), muted: v("--muted"), pass: v("--pass"), fail: v("--fail"), warn: v("--warn"), accent: v("--accent"), bg: v("--bg"), line: v("--border") };
}

/** issue 16 (v16): starts loading the chart library (a page calls it on mount, so the charts do not wait for it after their data). */
export function preloadPlot() {
  void import("@observablehq/plot");
}

/** Renders `build(Plot, width, palette)` into a div, again whenever deps or the width change. */
export function PlotBox({ build, deps, label, height }: { build: (P: PlotModule, width: number, c: Palette) => Element; deps: unknown[]; label: string; height: number }) {
  const ref = useRef<HTMLDivElement>(null);
  const [width, setWidth] = useState(0);
  useEffect(() => {
    const el = ref.current;
    if (!el) return;
    const ro = new ResizeObserver(([e]) => setWidth(Math.floor(e!.contentRect.width)));
    ro.observe(el);
    return () => ro.disconnect();
  }, []);
  useEffect(() => {
    const el = ref.current;
    if (!el || width < 50) return;
    let gone = false;
    import("@observablehq/plot").then((P) => {
      if (gone) return;
      const node = build(P, width, palette(el));
      // The box is one image with its own label; Plot's per-mark labels on <g> are not allowed there.
      for (const g of node.querySelectorAll("[aria-label]")) g.removeAttribute("aria-label");
      for (const svg of node.querySelectorAll("svg")) svg.setAttribute("aria-hidden", "true");
      if (node instanceof SVGElement) node.setAttribute("aria-hidden", "true");
      el.replaceChildren(node);
    });
    return () => {
      gone = true;
    };
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, [width, ...deps]);
  return <div ref={ref} role="img" aria-label={label} style={{ minHeight: height }} className="w-full overflow-hidden" />;
}

export function LegendSwatch({ shape, color, hollow }: { shape: "circle" | "triangle" | "square" | "diamond"; color: string; hollow?: boolean }) {
  const fill = hollow ? "none" : color;
  return (
    <svg width="16" height="16" viewBox="0 0 16 16" aria-hidden="true" className="inline-block align-middle">
      {shape === "circle" ? <circle cx="8" cy="8" r="6" fill={fill} stroke={color} strokeWidth="2" /> : null}
      {shape === "triangle" ? <path d="M8 1.5L15 14.5H1z" fill={fill} stroke={color} strokeWidth="2" /> : null}
      {shape === "square" ? <rect x="2" y="2" width="12" height="12" fill={fill} stroke={color} strokeWidth="2" /> : null}
      {shape === "diamond" ? <path d="M8 1l7 7-7 7-7-7z" fill={fill} stroke={color} strokeWidth="2" /> : null}
    </svg>
  );
}

/** On paper the legend sits in a column beside its chart (never on another page); on screens, below it. */
export const figureClass = (beside?: boolean) => (beside ? "chart-figure grid grid-cols-[minmax(0,1fr)_190px] items-start gap-x-[16px]" : "chart-figure");
export const captionClass = (beside?: boolean) => (beside ? "flex flex-col gap-2 pt-2 text-sm" : "mt-2 flex flex-wrap gap-x-5 gap-y-1 text-base");

/** Left margin wide enough for the longest y tick label (e.g. "−30,000" at 15 px), so no minus sign is cut off. */
export function marginForValues(values: number[], min = 56): number {
  const ext = Math.max(0, ...values.filter(Number.isFinite).map(Math.abs));
  const chars = Math.ceil(ext * 1.25).toLocaleString("en-US").length + 1;
  return Math.max(min, 16 + chars * 9);
}

export const baseStyle = (c: Palette) => ({ background: "transparent", color: c.fg, fontSize: "15px", fontFamily: "inherit", overflow: "visible" });

export function ErrorVsDistanceChart({ report, legendBeside }: { report: ReportJson; legendBeside?: boolean }) {
  const rows = report.shots;
  const height = legendBeside ? 300 : 360;
  return (
    <figure className={figureClass(legendBeside)}>
      <PlotBox
        label="Range error against reference distance, with the plus and minus limit envelope and the fitted zero offset and scale line"
        height={height}
        deps={[report, height]}
        build={(P, width, c) => {
          const env = [...rows].sort((a, b) => a.referenceM - b.referenceM).map((r) => ({ d: r.referenceM, lim: r.limitMm }));
          const maxD = env.length ? env[env.length - 1]!.d : 1;
          const fit = report.zeroOffsetMm != null && report.scalePpm != null ? [0, maxD].map((d) => ({ d, e: report.zeroOffsetMm! + (report.scalePpm! * d) / 1000 })) : [];
          const inc = rows.filter((r) => !r.excluded);
          return P.plot({
            width,
            height,
            marginLeft: marginForValues([...rows.map((r) => r.errorMm), ...env.map((r) => r.lim)]),
            marginBottom: 46,
            style: baseStyle(c),
            x: { label: "Reference distance (m) →", grid: true, nice: true, zero: true, labelOffset: 40 },
            y: { label: "↑ Range error (mm, + reads long)", grid: true, nice: true },
            marks: [
              P.areaY(env, { x: "d", y1: (r: { lim: number }) => -r.lim, y2: "lim", fill: c.accent, fillOpacity: 0.12 }),
              P.line(env, { x: "d", y: "lim", stroke: c.accent, strokeDasharray: "6,4", strokeWidth: 2 }),
              P.line(env, { x: "d", y: (r: { lim: number }) => -r.lim, stroke: c.accent, strokeDasharray: "6,4", strokeWidth: 2 }),
              P.ruleY([0], { stroke: c.muted }),
              fit.length ? P.line(fit, { x: "d", y: "e", stroke: c.warn, strokeWidth: 3 }) : null,
              P.dot(
                rows.filter((r) => r.excluded),
                { x: "referenceM", y: "errorMm", symbol: "square", stroke: c.muted, fill: "none", r: 5, strokeWidth: 2 },
              ),
              P.dot(
                inc.filter((r) => r.within),
                { x: "referenceM", y: "errorMm", symbol: "circle", fill: c.pass, r: 4.5 },
              ),
              P.dot(
                inc.filter((r) => !r.within),
                { x: "referenceM", y: "errorMm", symbol: "triangle", fill: c.fail, r: 6 },
              ),
              P.tip(
                rows,
                P.pointer({ x: "referenceM", y: "errorMm", title: (r: ReportShotRow) => `${r.referenceM.toFixed(3)} m\nerror ${r.errorMm.toFixed(2)} mm\nlimit ±${r.limitMm.toFixed(2)} mm` }),
              ),
            ],
          });
        }}
      />
      <figcaption className={captionClass(legendBeside)}>
        <span>
          <LegendSwatch shape="circle" color="var(--pass)" /> within limit
        </span>
        <span>
          <LegendSwatch shape="triangle" color="var(--fail)" /> outside limit
        </span>
        <span>
          <LegendSwatch shape="square" color="var(--muted)" hollow /> excluded
        </span>
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

export function MatrixChart({ cells, worst, legendBeside }: { cells: MatrixCell[]; worst: MatrixCell | null; legendBeside?: boolean }) {
  const present = REFLECTANCE_ORDER.filter((r) => cells.some((c) => c.reflectance === r));
  const maxAbs = Math.max(1, ...cells.map((c) => Math.abs(c.biasMm)));
  return (
    <figure className={figureClass(legendBeside)}>
      <PlotBox
        label="Bias by target reflectance and illuminance, one cell per combination with its shot count"
        height={80 + present.length * 70}
        deps={[cells, worst]}
        build={(P, width, c) =>
          P.plot({
            width: Math.min(width, 720),
            height: 80 + present.length * 70,
            marginLeft: 150,
            marginBottom: 48,
            style: baseStyle(c),
            x: { domain: [...ILLUMINANCE_ORDER], label: "Illuminance at the target (klux)", tickFormat: (b: string) => (b === "low" ? "< 10" : b === "moderate" ? "10–50" : "≥ 50, sun") },
            y: { domain: present, label: null, tickFormat: (b: string) => bandWord(b) },
            // the ramp's end labels sit on its ends: margins keep "−4,000" whole
            color: {
              type: "diverging",
              scheme: "RdBu",
              reverse: true,
              domain: [-maxAbs, maxAbs],
              pivot: 0,
              legend: true,
              label: "Bias (mm, blue reads short, red reads long)",
              ...({ marginLeft: 24, marginRight: 24, width: 320 } as object),
            },
            marks: [
              P.cell(cells, { x: "illuminance", y: "reflectance", fill: "biasMm", inset: 2 }),
              worst ? P.cell([worst], { x: "illuminance", y: "reflectance", stroke: c.fg, strokeWidth: 4, fill: "none", inset: 1 }) : null,
              P.text(cells, {
                x: "illuminance",
                y: "reflectance",
                text: (d: MatrixCell) => `${d.biasMm >= 0 ? "+" : "−"}${Math.abs(d.biasMm).toFixed(1)} mm\nn ${d.n}${d.outside ? ` · ${d.outside} out` : ""}`,
                // dark text on pale cells, white on saturated ones
                fill: (d: MatrixCell) => (Math.abs(d.biasMm) > 0.55 * maxAbs ? "#fff" : "#000"),
                stroke: (d: MatrixCell) => (Math.abs(d.biasMm) > 0.55 * maxAbs ? "#000" : "#fff"),
                strokeWidth: 2,
                fontSize: 15,
                fontWeight: "bold",
              }),
            ],
          })
        }
      />
      <figcaption className={legendBeside ? "pt-2 text-sm" : "mt-1 text-base text-muted"}>
        Each cell: bias of its included shots (mm, colour scale above the cells: blue reads short, red reads long) and their count; the framed cell is the largest bias with 3 or more shots.
      </figcaption>
    </figure>
  );
}

/** Keeps labels at least `gap` px apart along x (first one wins), so close sessions do not print over each other. */
export function thinByX<T>(items: T[], x: (d: T) => number, gap: number): T[] {
  const out: T[] = [];
  let last = -Infinity;
  for (const d of [...items].sort((p, q) => x(p) - x(q))) {
    if (x(d) - last >= gap) {
      out.push(d);
      last = x(d);
    }
  }
  return out;
}

export function DriftChart({
  drift,
  biasLimitMm,
  legendBeside,
  pastDueIds,
  trendLine,
  flagLegend,
}: {
  drift: DriftRow[];
  biasLimitMm: number | null;
  legendBeside?: boolean;
  /** Sessions held while the sensor's certificate was past due (the history page). */
  pastDueIds?: readonly string[];
  /** A fitted bias trend to draw, from its first to its last session (the history page). */
  trendLine?: { startedAt: string; biasMm: number }[] | null;
  /** What the triangles mean where it is not drift against the last sign-off. */
  flagLegend?: string;
}) {
  const data = drift.filter((d) => d.biasMm != null).map((d) => ({ ...d, t: new Date(d.startedAt) }));
  const pastDue = data.filter((d) => pastDueIds?.includes(d.sessionId));
  const trend = (trendLine ?? []).map((p) => ({ t: new Date(p.startedAt), biasMm: p.biasMm }));
  return (
    <figure className={figureClass(legendBeside)}>
      <PlotBox
        label="Bias per session over time, sessions flagged for drift drawn as triangles"
        height={260}
        deps={[drift, biasLimitMm, pastDueIds, trendLine]}
        build={(P, width, c) => {
          // sessions can lie months apart: a real time axis in the reader's zone, as many ticks as
          // the width holds, and the per-session labels thinned where sessions crowd together
          const marginLeft = marginForValues([...data.map((d) => d.biasMm ?? 0), biasLimitMm ?? 0], 60) + 16;
          const marginRight = 36;
          const inset = 24;
          const ts = data.map((d) => d.t.getTime());
          const t0 = Math.min(...ts);
          const t1 = Math.max(...ts);
          const span = t1 - t0 || 1;
          const px = (d: { t: Date }) => (data.length < 2 ? 0 : ((d.t.getTime() - t0) / span) * (width - marginLeft - marginRight - 2 * inset));
          const labelled = thinByX(data, px, 52);
          const flagged = thinByX(
            data.filter((d) => d.flag),
            px,
            52,
          );
          const offsets = [...new Set(data.map((d) => -d.t.getTimezoneOffset()))];
          const zone = offsets.length === 1 ? `local time, UTC${offsetText(offsets[0]!)}` : "local time";
          return P.plot({
            width,
            height: 260,
            marginLeft,
            marginRight,
            marginTop: 34,
            marginBottom: 48,
            style: baseStyle(c),
            x: {
              type: "time",
              label: `Session start (${zone}) →`,
              ticks: data.length === 1 ? data.map((d) => d.t) : Math.max(2, Math.floor(width / 130)),
              inset,
              labelOffset: 40,
              ...(data.length === 1 ? { tickFormat: "%Y-%m-%d %H:%M" } : {}),
            },
            // the y label runs up the axis, leaving the top edge to the shot counts
            y: { label: "Session bias (mm) →", labelAnchor: "center", grid: true, nice: true },
            marks: [
              biasLimitMm != null ? P.ruleY([biasLimitMm, -biasLimitMm], { stroke: c.accent, strokeDasharray: "6,4", strokeWidth: 2 }) : null,
              P.ruleY([0], { stroke: c.muted }),
              P.line(data, { x: "t", y: "biasMm", stroke: c.fg, strokeWidth: 2 }),
              trend.length ? P.line(trend, { x: "t", y: "biasMm", stroke: c.accent, strokeWidth: 2, strokeDasharray: "2,4" }) : null,
              pastDue.length ? P.dot(pastDue, { x: "t", y: "biasMm", symbol: "square", r: 12, stroke: c.fail, strokeWidth: 2.5, fill: "none" }) : null,
              pastDue.length ? P.text(thinByX(pastDue, px, 52), { x: "t", y: "biasMm", text: () => "cert. past due", dy: 22, fill: c.fail, fontWeight: "bold" }) : null,
              P.dot(
                data.filter((d) => !d.flag),
                { x: "t", y: "biasMm", fill: c.fg, r: 5, symbol: "circle" },
              ),
              P.dot(
                data.filter((d) => d.flag),
                { x: "t", y: "biasMm", fill: c.warn, r: 8, symbol: "triangle", stroke: c.fg },
              ),
              P.text(flagged, { x: "t", y: "biasMm", text: () => "drift", dy: -16, fill: c.fg, fontWeight: "bold" }),
              // shot counts along the top edge, clear of the points and the time axis
              P.text(labelled, { x: "t", frameAnchor: "top", text: (d: DriftRow) => `n ${d.n}`, dy: -6, fill: c.muted }),
            ],
          });
        }}
      />
      <figcaption className={captionClass(legendBeside)}>
        <span>
          <LegendSwatch shape="circle" color="var(--fg)" /> session bias (n = its shots; labels thinned where sessions crowd)
        </span>
        <span>
          <LegendSwatch shape="triangle" color="var(--warn)" /> {flagLegend ?? "drift: moved more than the tolerance from the last sign-off"}
        </span>
        {trend.length ? (
          <span>
            <span className="inline-block h-0 w-6 border-t-2 border-dotted border-accent align-middle" /> bias trend (least squares)
          </span>
        ) : null}
        {pastDue.length ? (
          <span>
            <LegendSwatch shape="square" color="var(--fail)" hollow /> certificate past due on the session's date
          </span>
        ) : null}
        <span>
          <span className="inline-block h-0 w-6 border-t-2 border-dashed border-accent align-middle" /> ± bias limit (mm)
        </span>
      </figcaption>
    </figure>
  );
}
