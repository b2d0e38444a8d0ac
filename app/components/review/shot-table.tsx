// The shot table of a sensor report: sortable, filterable, paged FROM THE SERVER (issue 16:
// GET /api/shots with sort, filters, count and a cursor per page, so the browser holds one page
// at any number of shots); flags, excluded state and a photo thumbnail per shot; QA excludes
// (with a written reason) and restores from here.
import { useEffect, useState } from "react";
import { VerdictShape } from "~/components/verdict-badge";
import { num, signed } from "./format";
import { LocalTime } from "./local-time";
import type { ReportShotRow, ShotDetail } from "./types";
import { toDetail } from "./use-report";

type SortKey = "takenAt" | "referenceM" | "errorMm" | "absError" | "limitMm";
type StatusFilter = "all" | "outside" | "within" | "excluded" | "flagged";
export const PAGE_SIZE = 20;

export type ShotTableProps = {
  sensorId: string;
  /** The report's selection: period, sessions, and the project whose rule judges (its k sets the limits). */
  selection: { from: string; to: string; sessions: string[]; ruleProjectId: string | null };
  /** Changes after an exclusion or a restore: the current page is read again. */
  version: number;
  sessionLabels: Map<string, string>;
  canExclude: boolean;
  busyId: string | null;
  onExclude: (id: string, reason: string) => Promise<string | null>;
  onRestore: (id: string, reason: string) => Promise<string | null>;
};

type Row = ReportShotRow & { detail: ShotDetail };

/** The /api/shots query of a table state (api.md plus the optional sort, flag=any and count of issue 16). */
export function shotTableQuery(sensorId: string, sel: ShotTableProps["selection"], status: StatusFilter, session: string, sort: { key: SortKey; dir: 1 | -1 }, cursor: string | null) {
  const qs = new URLSearchParams({ sensor: sensorId, limit: String(PAGE_SIZE), sort: `${sort.dir === -1 ? "-" : ""}${sort.key}`, count: "true" });
  if (sel.from) qs.set("from", sel.from);
  if (sel.to) qs.set("to", sel.to);
  const sessions = session ? [session] : sel.sessions;
  for (const s of sessions) qs.append("session", s);
  if (sel.ruleProjectId) qs.set("project", sel.ruleProjectId);
  if (status === "outside" || status === "within") {
    qs.set("within", status === "within" ? "true" : "false");
    qs.set("excluded", "false");
  }
  if (status === "excluded") qs.set("excluded", "true");
  if (status === "flagged") qs.set("flag", "any");
  if (cursor) qs.set("cursor", cursor);
  return qs;
}

function rowOf(s: Record<string, unknown>): Row {
  return {
    id: String(s.id),
    takenAt: String(s.takenAt),
    sessionId: String(s.sessionId),
    referenceM: Number(s.referenceM),
    rangeM: Number(s.rangeM),
    errorMm: Number(s.errorMm),
    limitMm: Number(s.limitMm),
    within: s.within === true,
    repeatabilityMm: typeof s.repeatabilityMm === "number" ? s.repeatabilityMm : null,
    excluded: s.excluded === true,
    flags: Array.isArray(s.flags) ? (s.flags as ReportShotRow["flags"]) : [],
    detail: toDetail(s),
  };
}

export function ShotTable({ sensorId, selection, version, sessionLabels, canExclude, busyId, onExclude, onRestore }: ShotTableProps) {
  const [sort, setSort] = useState<{ key: SortKey; dir: 1 | -1 }>({ key: "absError", dir: -1 });
  const [status, setStatus] = useState<StatusFilter>("all");
  const [session, setSession] = useState("");
  // cursors[p] opens page p (null: the first); the server pages, so pages are walked in order
  const [cursors, setCursors] = useState<(string | null)[]>([null]);
  const [page, setPage] = useState(0);
  const [open, setOpen] = useState<string | null>(null);
  const [data, setData] = useState<{ rows: Row[]; total: number; next: string | null } | null>(null);
  const [error, setError] = useState<string | null>(null);
  const [loading, setLoading] = useState(true);
  const selKey = JSON.stringify(selection);

  // a new order, filter or selection starts again at page 1
  useEffect(() => {
    setCursors([null]);
    setPage(0);
  }, [sort.key, sort.dir, status, session, selKey]);

  const cursor = cursors[page] ?? null;
  useEffect(() => {
    const ac = new AbortController();
    setLoading(true);
    const qs = shotTableQuery(sensorId, JSON.parse(selKey) as ShotTableProps["selection"], status, session, sort, cursor);
    fetch(`/api/shots?${qs}`, { signal: ac.signal, headers: { Accept: "application/json" } })
      .then(async (r) => {
        const body = (await r.json().catch(() => ({}))) as { shots?: Record<string, unknown>[]; nextCursor?: string | null; total?: number; error?: string };
        if (!r.ok) throw new Error(body.error ?? `The server answered ${r.status}.`);
        if (ac.signal.aborted) return;
        setData({ rows: (body.shots ?? []).map(rowOf), total: body.total ?? 0, next: body.nextCursor ?? null });
        setError(null);
        setLoading(false);
      })
      .catch((e: unknown) => {
        if (ac.signal.aborted) return;
        setError(e instanceof Error ? e.message : String(e));
        setLoading(false);
      });
    return () => ac.abort();
  }, [sensorId, selKey, status, session, sort, cursor, version]);

  const total = data?.total ?? 0;
  const pages = Math.max(1, Math.ceil(total / PAGE_SIZE));
  const shown = data?.rows ?? [];
  const sessions = selection.sessions.length ? selection.sessions : [...sessionLabels.keys()];

  function goNext() {
    if (!data?.next) return;
    const next = [...cursors.slice(0, page + 1), data.next];
    setCursors(next);
    setPage(page + 1);
  }

  function header(key: SortKey, label: string, right = true) {
    const active = sort.key === key;
    return (
      <th scope="col" className={`py-1 pr-2 ${right ? "text-right" : "text-left"}`} aria-sort={active ? (sort.dir === 1 ? "ascending" : "descending") : "none"}>
        <button
          type="button"
          className="min-h-11 font-bold underline-offset-4 hover:underline"
          onClick={() => setSort(active ? { key, dir: sort.dir === 1 ? -1 : 1 } : { key, dir: key === "takenAt" || key === "referenceM" ? 1 : -1 })}
        >
          {label} {active ? (sort.dir === 1 ? "▲" : "▼") : ""}
        </button>
      </th>
    );
  }

  return (
    <div data-testid="shot-table" data-loading={loading}>
      <div className="mb-3 flex flex-wrap items-end gap-3">
        <div>
          <label htmlFor="shot-status" className="field-label">
            Show
          </label>
          <select id="shot-status" className="input" value={status} onChange={(e) => setStatus(e.target.value as StatusFilter)}>
            <option value="all">All shots</option>
            <option value="outside">Outside limit</option>
            <option value="within">Within limit</option>
            <option value="flagged">Flagged (outlier, wrap)</option>
            <option value="excluded">Excluded</option>
          </select>
        </div>
        <div>
          <label htmlFor="shot-session" className="field-label">
            Session
          </label>
          <select id="shot-session" className="input" value={session} onChange={(e) => setSession(e.target.value)}>
            <option value="">All sessions</option>
            {sessions.map((s) => (
              <option key={s} value={s}>
                {sessionLabels.get(s) ?? s.slice(0, 8)}
              </option>
            ))}
          </select>
        </div>
        <p className="pb-2 text-muted" aria-live="polite">
          {data ? `${total.toLocaleString("en-US")} shot${total === 1 ? "" : "s"}${status === "all" && !session ? "" : " match"}` : ""}
          {loading ? " · loading…" : ""}
        </p>
      </div>
      {error ? (
        <p role="alert" className="field-error">
          The shots could not be loaded: {error}
        </p>
      ) : null}
      <div className="overflow-x-auto">
        <table className="w-full border-collapse text-left">
          <caption className="sr-only">Check-shots of this report</caption>
          <thead>
            <tr className="border-b-2 border-line">
              {header("takenAt", "Taken", false)}
              {header("referenceM", "Reference (m)")}
              <th scope="col" className="py-1 pr-2 text-right">
                Range (m)
              </th>
              {header("errorMm", "Error (mm)")}
              {header("limitMm", "Limit ± (mm)")}
              <th scope="col" className="py-1 pr-2">
                Within
              </th>
              <th scope="col" className="py-1 pr-2">
                Target
              </th>
              <th scope="col" className="py-1 pr-2">
                Flags
              </th>
              <th scope="col" className="py-1 pr-2">
                Photo
              </th>
              <th scope="col" className="py-1">
                State
              </th>
            </tr>
          </thead>
          <tbody>
            {data && shown.length === 0 ? (
              <tr>
                <td colSpan={10} className="py-4 text-center text-muted">
                  No shots match these filters.
                </td>
              </tr>
            ) : null}
            {shown.map((r) => (
              <ShotRow
                key={r.id}
                row={r}
                detail={r.detail}
                canExclude={canExclude}
                busy={busyId === r.id}
                open={open === r.id}
                onToggle={() => setOpen(open === r.id ? null : r.id)}
                onExclude={async (reason) => {
                  const err = await onExclude(r.id, reason);
                  if (!err) setOpen(null);
                  return err;
                }}
                onRestore={async (reason) => {
                  const err = await onRestore(r.id, reason);
                  if (!err) setOpen(null);
                  return err;
                }}
              />
            ))}
          </tbody>
        </table>
      </div>
      <nav aria-label="Shot table pages" className="mt-3 flex items-center gap-3">
        <button type="button" className="btn-secondary" disabled={page === 0} onClick={() => setPage(page - 1)}>
          ← Previous
        </button>
        <span className="num">
          Page {page + 1} of {pages.toLocaleString("en-US")}
        </span>
        <button type="button" className="btn-secondary" disabled={!data?.next} onClick={goNext}>
          Next →
        </button>
      </nav>
    </div>
  );
}

function ShotRow(props: {
  row: ReportShotRow;
  detail: ShotDetail | undefined;
  canExclude: boolean;
  busy: boolean;
  open: boolean;
  onToggle: () => void;
  onExclude: (reason: string) => Promise<string | null>;
  onRestore: (reason: string) => Promise<string | null>;
}) {
  const { row: r, detail: d } = props;
  const [reason, setReason] = useState("");
  const [error, setError] = useState<string | null>(null);
  const formId = `excl-${r.id}`;
  const strike = r.excluded ? "line-through decoration-2" : "";
  async function submit(e: React.FormEvent) {
    e.preventDefault();
    const text = reason.trim();
    if (!r.excluded && text.length < 3) {
      setError("Write why this shot is left out (at least 3 characters).");
      return;
    }
    setError(null);
    const err = r.excluded ? await props.onRestore(text) : await props.onExclude(text);
    if (err) setError(err);
    else setReason("");
  }
  return (
    <>
      <tr className={`border-b border-line num ${r.excluded ? "text-muted" : ""}`} data-shot={r.id} data-excluded={r.excluded}>
        <td className="py-1 pr-2 whitespace-nowrap">
          <LocalTime iso={r.takenAt} />
        </td>
        <td className={`py-1 pr-2 text-right ${strike}`}>{num(r.referenceM, 3)}</td>
        <td className={`py-1 pr-2 text-right ${strike}`}>{num(r.rangeM, 3)}</td>
        <td className={`py-1 pr-2 text-right font-bold ${strike}`}>{signed(r.errorMm, 2)}</td>
        <td className={`py-1 pr-2 text-right ${strike}`}>{num(r.limitMm, 2)}</td>
        <td className="py-1 pr-2">
          <WithinWord within={r.within} />
        </td>
        <td className="py-1 pr-2">
          {d?.targetLabel ?? "—"}
          {d?.reflectancePct != null ? (
            <span className="block text-sm text-muted">
              {num(d.reflectancePct, 0)} % · {d.illuminanceKlux == null ? "— klux" : `${num(d.illuminanceKlux, 0)} klux`}
            </span>
          ) : null}
          {d?.scanSha256 ? (
            <span className="block text-sm text-muted" title={`SHA-256 of the scan or frames: ${d.scanSha256}`} data-testid="scan-sha">
              from file {d.scanSha256.slice(0, 12)}…
            </span>
          ) : null}
        </td>
        <td className="py-1 pr-2">
          {r.flags.length
            ? r.flags.map((f) => (
                <span key={f} className="mr-1 rounded border-2 border-warn px-1 text-sm font-bold text-warn">
                  {f === "outlier" ? "◆ outlier" : "↻ wrap"}
                </span>
              ))
            : "—"}
        </td>
        <td className="py-1 pr-2">
          {d?.photoIds.length ? (
            <a href={`/api/photos/${d.photoIds[0]}`} target="_blank" rel="noreferrer" className="inline-block min-h-11">
              <img
                src={`/api/photos/${d.photoIds[0]}`}
                alt={`Photo of the shot at ${num(r.referenceM, 1)} m`}
                width={56}
                height={42}
                loading="lazy"
                className="h-[42px] w-[56px] rounded border border-line object-cover"
              />
            </a>
          ) : (
            <span className="text-muted">none</span>
          )}
        </td>
        <td className="py-1">
          <span className="block font-bold">{r.excluded ? "Excluded" : "Included"}</span>
          {props.canExclude ? (
            <button type="button" className="btn-secondary mt-1 no-underline" aria-expanded={props.open} aria-controls={formId} onClick={props.onToggle}>
              {r.excluded ? "Restore…" : "Exclude…"}
            </button>
          ) : null}
        </td>
      </tr>
      {r.excluded && d?.exclusionReason ? (
        <tr className="border-b border-line">
          <td colSpan={10} className="pb-2 text-sm text-muted">
            Excluded because: {d.exclusionReason}
          </td>
        </tr>
      ) : null}
      {props.open ? (
        <tr className="border-b-2 border-line bg-surface">
          <td colSpan={10} className="p-3">
            <form id={formId} onSubmit={submit} noValidate className="flex flex-wrap items-end gap-3">
              <div className="min-w-72 flex-1">
                <label htmlFor={`${formId}-reason`} className="field-label">
                  {r.excluded ? "Reason for restoring (optional)" : "Reason for excluding (required, kept in the audit trail)"}
                </label>
                <textarea
                  id={`${formId}-reason`}
                  name="reason"
                  className="input"
                  rows={2}
                  value={reason}
                  onChange={(e) => setReason(e.target.value)}
                  aria-invalid={error ? true : undefined}
                  aria-describedby={error ? `${formId}-error` : undefined}
                />
                {error ? (
                  <p id={`${formId}-error`} className="field-error">
                    {error}
                  </p>
                ) : null}
              </div>
              <button type="submit" className="btn" disabled={props.busy}>
                {props.busy ? "Saving…" : r.excluded ? "Restore shot" : "Exclude shot"}
              </button>
              <button type="button" className="btn-secondary" onClick={props.onToggle}>
                Cancel
              </button>
            </form>
          </td>
        </tr>
      ) : null}
    </>
  );
}

/** A shot is within or outside its limit: the word and the verdict shapes, never colour alone. */
export function WithinWord({ within }: { within: boolean }) {
  return (
    <span className={`inline-flex items-center gap-1.5 font-bold ${within ? "text-pass" : "text-fail"}`}>
      <VerdictShape verdict={within ? "pass" : "fail"} />
      {within ? "Within" : "Outside"}
    </span>
  );
}
