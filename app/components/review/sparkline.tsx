// A small bias-over-time trace for the overview (plain SVG, drawn on the server too).
export function BiasTrace({ points, limitMm }: { points: { startedAt: string; biasMm: number | null; flag: boolean }[]; limitMm: number }) {
  const pts = points.filter((p) => p.biasMm != null) as { startedAt: string; biasMm: number; flag: boolean }[];
  if (pts.length === 0) return <span className="text-muted">no sessions</span>;
  const W = 132;
  const H = 40;
  const pad = 5;
  const span = Math.max(limitMm, ...pts.map((p) => Math.abs(p.biasMm))) * 1.1 || 1;
  const x = (i: number) => (pts.length === 1 ? W / 2 : pad + (i * (W - 2 * pad)) / (pts.length - 1));
  const y = (v: number) => H / 2 - (v / span) * (H / 2 - pad);
  const path = pts.map((p, i) => `${i ? "L" : "M"}${x(i).toFixed(1)},${y(p.biasMm).toFixed(1)}`).join("");
  const label = `Session bias over time: ${pts.map((p) => `${p.biasMm.toFixed(1)} mm`).join(", ")}`;
  return (
    <svg width={W} height={H} viewBox={`0 0 ${W} ${H}`} role="img" aria-label={label}>
      <rect x="0" y={y(limitMm)} width={W} height={y(-limitMm) - y(limitMm)} fill="var(--accent)" opacity="0.12" />
      <line x1="0" x2={W} y1={y(0)} y2={y(0)} stroke="var(--muted)" strokeWidth="1" />
      <path d={path} fill="none" stroke="var(--fg)" strokeWidth="2" />
      {pts.map((p, i) =>
        p.flag ? (
          <path key={i} d={`M${x(i)},${y(p.biasMm) - 5}l5,9h-10z`} fill="var(--warn)" stroke="var(--fg)" />
        ) : (
          <circle key={i} cx={x(i)} cy={y(p.biasMm)} r="3" fill={Math.abs(p.biasMm) > limitMm ? "var(--fail)" : "var(--fg)"} />
        ),
      )}
    </svg>
  );
}
