// The per-target rows of a scan or frame import (api.md v1.1 answer), a small plot per target
// of its points coloured by their distance from the fitted plane, and the upload with progress.
import { useState } from "react";
import type { ScanAnswer, ScanTargetRow } from "~/contract/scan";
import { num, signed } from "./format";

export type UploadOutcome = { status: number; body: ScanAnswer & { error?: string; errors?: { path: string; message: string }[] } };

/** POST a multipart form with upload progress (fetch cannot report it). */
export function uploadWithProgress(url: string, form: FormData, onProgress: (fraction: number) => void): Promise<UploadOutcome> {
  return new Promise((resolve, reject) => {
    const xhr = new XMLHttpRequest();
    xhr.open("POST", url);
    xhr.responseType = "json";
    xhr.upload.onprogress = (e) => e.lengthComputable && onProgress(e.loaded / e.total);
    xhr.upload.onload = () => onProgress(1);
    xhr.onload = () => resolve({ status: xhr.status, body: (xhr.response ?? { error: `The server answered ${xhr.status}.` }) as UploadOutcome["body"] });
    xhr.onerror = () => reject(new Error("The upload did not reach the server (offline?). Nothing was imported."));
    xhr.send(form);
  });
}

/** Diverging colours (blue below the plane, orange above), readable with red–green colour blindness. */
function colourOf(d: number, lim: number): string {
  const t = Math.max(-1, Math.min(1, d / lim));
  const mix = (a: number[], b: number[], f: number) => a.map((x, i) => Math.round(x + (b[i] - x) * f));
  const mid = [221, 221, 221];
  const c = t < 0 ? mix(mid, [33, 102, 172], -t) : mix(mid, [230, 97, 1], t);
  return `rgb(${c[0]},${c[1]},${c[2]})`;
}

export function PlanePlot({ row }: { row: ScanTargetRow }) {
  const p = row.plot;
  if (!p || !p.a.length) return null;
  const size = 150;
  const pad = 6;
  let ext = 0;
  for (let i = 0; i < p.a.length; i++) ext = Math.max(ext, Math.abs(p.a[i]), Math.abs(p.b[i]));
  ext = ext || 1;
  const lim = Math.max(3 * (row.planeRmsMm ?? 0), 0.5);
  const sx = (v: number) => pad + ((v + ext) / (2 * ext)) * (size - 2 * pad);
  return (
    <figure className="inline-block" data-testid={`plot-${row.targetId}`}>
      <svg
        width={size}
        height={size + 26}
        role="img"
        aria-label={`Points of ${row.label ?? row.targetId} on the fitted plane, coloured by distance from it: blue behind, orange in front, ±${lim.toFixed(1)} mm full scale`}
      >
        <rect x={0} y={0} width={size} height={size} fill="#1b1b1b" rx={4} />
        {p.a.map((a, i) => (
          <circle key={i} cx={sx(a)} cy={size - sx(p.b[i])} r={1.6} fill={colourOf(p.dMm[i], lim)} />
        ))}
        <defs>
          <linearGradient id={`lg-${row.targetId}`}>
            <stop offset="0" stopColor={colourOf(-lim, lim)} />
            <stop offset="0.5" stopColor={colourOf(0, lim)} />
            <stop offset="1" stopColor={colourOf(lim, lim)} />
          </linearGradient>
        </defs>
        <rect x={pad} y={size + 4} width={size - 2 * pad} height={8} fill={`url(#lg-${row.targetId})`} />
        <text x={pad} y={size + 24} fontSize={11} fill="currentColor">
          −{lim.toFixed(1)}
        </text>
        <text x={size / 2} y={size + 24} fontSize={11} fill="currentColor" textAnchor="middle">
          0 mm
        </text>
        <text x={size - pad} y={size + 24} fontSize={11} fill="currentColor" textAnchor="end">
          +{lim.toFixed(1)}
        </text>
      </svg>
    </figure>
  );
}

function WithinCell({ within }: { within: boolean | null }) {
  if (within == null) return <span className="text-muted">—</span>;
  return within ? <span className="font-bold text-pass">✓ within</span> : <span className="font-bold text-fail">✗ outside</span>;
}

/** A photo of the board, attached to a stored shot as from the tablet (POST /api/photos). */
function PhotoAttach({ shotId, label }: { shotId: string; label: string }) {
  const [state, setState] = useState<{ busy: boolean; message: string | null; ok: boolean }>({ busy: false, message: null, ok: false });
  async function attach(file: File) {
    setState({ busy: true, message: null, ok: false });
    const form = new FormData();
    form.set("shotId", shotId);
    form.set("file", file);
    try {
      const res = await fetch("/api/photos", { method: "POST", body: form });
      const body = (await res.json().catch(() => ({}))) as { error?: string };
      setState(res.ok ? { busy: false, message: `Photo ${file.name} attached.`, ok: true } : { busy: false, message: body.error ?? `The server answered ${res.status}.`, ok: false });
    } catch {
      setState({ busy: false, message: "The photo did not reach the server (offline?).", ok: false });
    }
  }
  const id = `photo-${shotId}`;
  return (
    <span className="mt-1 block text-sm font-normal text-fg">
      <label htmlFor={id} className="underline underline-offset-4">
        Attach a photo of {label}
      </label>
      <input id={id} type="file" accept="image/*" className="mt-1 block max-w-56 text-sm" disabled={state.busy} onChange={(e) => e.target.files?.[0] && void attach(e.target.files[0])} />
      {state.message ? (
        <span className={`block ${state.ok ? "text-pass" : "text-fail"}`} role="status">
          {state.message}
        </span>
      ) : null}
    </span>
  );
}

function SyncCell({ row }: { row: ScanTargetRow }) {
  if (!row.sync) return null;
  const s = row.sync;
  const word = s.status === "accepted" ? "Stored" : s.status === "duplicate" ? "Already stored (duplicate)" : "Refused";
  return (
    <span className={`block text-sm font-bold ${s.status === "rejected" ? "text-fail" : s.status === "accepted" ? "text-pass" : ""}`} data-sync={s.status}>
      {word}
      {s.errors.map((e) => (
        <span key={e.path + e.message} className="block font-normal">
          {e.path}: {e.message}
        </span>
      ))}
      {s.status !== "rejected" && row.shotId ? <PhotoAttach shotId={row.shotId} label={row.label ?? "the board"} /> : null}
    </span>
  );
}

/** One row per target; found targets get their plot beneath. */
export function ScanRowsTable({ rows, frames = false }: { rows: ScanTargetRow[]; frames?: boolean }) {
  return (
    <div className="overflow-x-auto">
      <table className="w-full border-collapse text-left num" data-testid="scan-rows">
        <caption className="sr-only">One row per target: what was found and the check-shot it makes</caption>
        <thead>
          <tr className="border-b-2 border-line">
            <th scope="col" className="py-1 pr-2">
              Target
            </th>
            <th scope="col" className="py-1 pr-2 text-right">
              Points
            </th>
            <th scope="col" className="py-1 pr-2 text-right">
              Plane RMS (mm)
            </th>
            <th scope="col" className="py-1 pr-2 text-right">
              Incidence (°)
            </th>
            <th scope="col" className="py-1 pr-2 text-right">
              Range (m)
            </th>
            <th scope="col" className="py-1 pr-2 text-right">
              Reference (m)
            </th>
            <th scope="col" className="py-1 pr-2 text-right">
              Error (mm)
            </th>
            <th scope="col" className="py-1 pr-2 text-right">
              Limit (mm)
            </th>
            <th scope="col" className="py-1 pr-2">
              Within
            </th>
            {frames ? (
              <>
                <th scope="col" className="py-1 pr-2 text-right">
                  Temporal noise (mm)
                </th>
                <th scope="col" className="py-1 pr-2 text-right">
                  Flying pixels
                </th>
              </>
            ) : null}
          </tr>
        </thead>
        <tbody>
          {rows.map((r) => (
            <RowPair key={r.targetId} r={r} frames={frames} />
          ))}
        </tbody>
      </table>
    </div>
  );
}

function RowPair({ r, frames }: { r: ScanTargetRow; frames: boolean }) {
  const cols = frames ? 11 : 9;
  if (r.status === "not_found") {
    return (
      <tr className="border-b border-line" data-target={r.targetId} data-status="not_found">
        <th scope="row" className="py-2 pr-2 font-bold">
          {r.label ?? r.targetId}
        </th>
        <td className="py-2 pr-2 text-right">{r.points}</td>
        <td colSpan={cols - 2} className="py-2 pr-2 text-warn">
          ⚠ Not found: {r.reason}
        </td>
      </tr>
    );
  }
  return (
    <>
      <tr className="border-b border-line" data-target={r.targetId} data-status="found">
        <th scope="row" className="py-1 pr-2 font-bold">
          {r.label ?? r.targetId}
          <SyncCell row={r} />
        </th>
        <td className="py-1 pr-2 text-right">{r.points}</td>
        <td className="py-1 pr-2 text-right">{num(r.planeRmsMm, 2)}</td>
        <td className="py-1 pr-2 text-right">{num(r.incidenceDeg, 1)}</td>
        <td className="py-1 pr-2 text-right">{num(r.rangeM, 4)}</td>
        <td className="py-1 pr-2 text-right">{num(r.referenceM, 4)}</td>
        <td className="py-1 pr-2 text-right font-bold" data-testid="error-mm">
          {signed(r.errorMm, 2)}
        </td>
        <td className="py-1 pr-2 text-right">{num(r.limitMm, 2)}</td>
        <td className="py-1 pr-2">
          <WithinCell within={r.within} />
        </td>
        {frames ? (
          <>
            <td className="py-1 pr-2 text-right">{num(r.temporalNoiseMm, 2)}</td>
            <td className="py-1 pr-2 text-right">{r.flyingPixels ?? "—"}</td>
          </>
        ) : null}
      </tr>
      {r.errors?.length ? (
        <tr className="border-b border-line">
          <td colSpan={cols} className="pb-2 text-fail">
            {r.errors.map((e) => `${e.path}: ${e.message}`).join("; ")}
          </td>
        </tr>
      ) : null}
      {r.plot ? (
        <tr className="border-b border-line">
          <td colSpan={cols} className="py-2">
            <PlanePlot row={r} />
          </td>
        </tr>
      ) : null}
    </>
  );
}
