// Fetches a sensor's report and shot details from the API in the browser, so filters and
// exclusions update the figures without a page load.
import { useCallback, useEffect, useRef, useState } from "react";
import type { ReportJson, ReportShotRow, ShotDetail } from "./types";
import type { ErrorSeriesJson } from "./charts";
import type { MatrixCell } from "./matrix";
import type { IncludedTotals } from "~/domain/explain";

export type ReportFilters = { from: string; to: string; sessions: string[]; project: string };

export function reportQuery(f: ReportFilters) {
  const qs = new URLSearchParams();
  if (f.from) qs.set("from", f.from);
  if (f.to) qs.set("to", f.to);
  for (const s of f.sessions) qs.append("session", s);
  if (f.project) qs.set("project", f.project);
  return qs;
}

async function errorOf(res: Response) {
  try {
    const body = (await res.json()) as { error?: string };
    if (body?.error) return body.error;
  } catch {}
  return `The server answered ${res.status}.`;
}

/** Reads what the table and the matrix need of a shot from an /api/shots item, whatever extra it carries. */
export type ShotExtras = { photos: Record<string, string[]>; targets: Record<string, string>; reasons: Record<string, string> };

export function toDetail(s: Record<string, unknown>, extras?: ShotExtras): ShotDetail {
  const id = String(s.id);
  const targetId = typeof s.targetId === "string" ? s.targetId : null;
  const photos = Array.isArray(s.photoIds)
    ? (s.photoIds as string[])
    : Array.isArray(s.photos)
      ? (s.photos as { id: string }[]).map((p) => (typeof p === "string" ? p : p.id))
      : s.photoId
        ? [String(s.photoId)]
        : [];
  const target = s.target as { label?: string } | undefined;
  const excl = s.exclusion as { reason?: string } | null | undefined;
  return {
    id,
    reflectancePct: typeof s.reflectancePct === "number" ? s.reflectancePct : null,
    retro: s.retro === true,
    illuminanceKlux: typeof s.illuminanceKlux === "number" ? s.illuminanceKlux : null,
    targetLabel: typeof s.targetLabel === "string" ? s.targetLabel : (target?.label ?? (targetId ? (extras?.targets[targetId] ?? null) : null)),
    photoIds: photos.length ? photos : (extras?.photos[id] ?? []),
    exclusionReason: typeof s.exclusionReason === "string" ? s.exclusionReason : (excl?.reason ?? extras?.reasons[id] ?? null),
    note: typeof s.note === "string" ? s.note : null,
    scanSha256: typeof s.scanSha256 === "string" ? s.scanSha256 : null,
  };
}

export async function fetchAllShots(sensorId: string, signal?: AbortSignal, extras?: ShotExtras): Promise<Map<string, ShotDetail>> {
  const out = new Map<string, ShotDetail>();
  let cursor: string | null = null;
  for (let guard = 0; guard < 200; guard++) {
    const qs = new URLSearchParams({ sensor: sensorId, limit: "500" });
    if (cursor) qs.set("cursor", cursor);
    const res = await fetch(`/api/shots?${qs}`, { signal, headers: { Accept: "application/json" } });
    if (!res.ok) throw new Error(await errorOf(res));
    const body = (await res.json()) as { shots?: Record<string, unknown>[]; nextCursor?: string | null; cursor?: string | null };
    for (const s of body.shots ?? []) out.set(String(s.id), toDetail(s, extras));
    cursor = body.nextCursor ?? null;
    if (!cursor) break;
  }
  return out;
}

/** issue 16: what GET /api/sensors/:id/report/series answers (app/models/report-series.server.ts). */
export type ReportSeries = {
  sensorId: string;
  ruleProjectId: string | null;
  coverageK: number;
  outlier: { medianMm: number; cutMm: number } | null;
  errorSeries: ErrorSeriesJson;
  cells: MatrixCell[];
  explain: { included: IncludedTotals; flagged: Pick<ReportShotRow, "id" | "errorMm" | "limitMm" | "within" | "excluded" | "flags">[] };
};

/** The report without its rows (api.md v1.1) as the page reads it. */
export type ReportSummary = Omit<ReportJson, "shots">;

/**
 * issue 16 (v16): the two reads the page starts with. The route names them in `<link rel="preload">`
 * in its HTML, so the browser asks for them while it still loads the scripts; the fetches below
 * are then answered from that preload (the same URL, mode and credentials, and no extra header:
 * a request with its own headers would not match it).
 */
export function reportUrls(sensorId: string, filters: ReportFilters | string) {
  const id = encodeURIComponent(sensorId);
  const key = typeof filters === "string" ? filters : reportQuery(filters).toString();
  const qs = key ? `?${key}` : "";
  return { report: `/api/sensors/${id}/report${qs}`, series: `/api/sensors/${id}/report/series${qs}` };
}

async function getJson<T>(url: string, signal: AbortSignal): Promise<T> {
  const r = await fetch(url, { signal });
  if (!r.ok) throw new Error(await errorOf(r));
  return (await r.json()) as T;
}

/**
 * issue 16: the report WITHOUT its per-shot rows and the chart series, side by side: both stay
 * small at any number of shots. The shot table pages from /api/shots by itself.
 */
export function useSensorReport(sensorId: string, filters: ReportFilters) {
  const [report, setReport] = useState<ReportSummary | null>(null);
  const [series, setSeries] = useState<ReportSeries | null>(null);
  const [error, setError] = useState<string | null>(null);
  const [loading, setLoading] = useState(true);
  const [version, setVersion] = useState(0);
  const key = reportQuery(filters).toString();
  const abortRef = useRef<AbortController | null>(null);

  useEffect(() => {
    abortRef.current?.abort();
    const ac = new AbortController();
    abortRef.current = ac;
    setLoading(true);
    const urls = reportUrls(sensorId, key);
    Promise.all([getJson<ReportSummary>(urls.report, ac.signal), getJson<ReportSeries>(urls.series, ac.signal)])
      .then(([r, s]) => {
        if (ac.signal.aborted) return;
        setReport(r);
        setSeries(s);
        setError(null);
        setLoading(false);
      })
      .catch((e: unknown) => {
        if (ac.signal.aborted) return;
        setError(e instanceof Error ? e.message : String(e));
        setLoading(false);
      });
    return () => ac.abort();
  }, [sensorId, key, version]);

  const reload = useCallback(() => setVersion((v) => v + 1), []);
  return { report, series, error, loading, reload, version };
}

/** POST (exclude) or DELETE (restore) a shot's exclusion; returns an error text or null. */
export async function setExclusion(shotId: string, exclude: boolean, reason: string): Promise<string | null> {
  try {
    const res = await fetch(`/api/shots/${encodeURIComponent(shotId)}/exclusion`, {
      method: exclude ? "POST" : "DELETE",
      headers: { "Content-Type": "application/json", Accept: "application/json" },
      body: JSON.stringify(exclude || reason ? { reason } : {}),
    });
    if (!res.ok) return await errorOf(res);
    return null;
  } catch {
    return "The server could not be reached. Check the connection and try again.";
  }
}
