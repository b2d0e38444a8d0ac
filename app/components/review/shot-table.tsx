// The shot table of a sensor report: sortable, filterable, paged; flags, excluded state and a
// photo thumbnail per shot; QA excludes (with a written reason) and restores from here.
import { useMemo, useState } from "react";
import { VerdictShape } from "~/components/verdict-badge";
import { num, signed } from "./format";
import { LocalTime } from "./local-time";
import type { ReportShotRow, ShotDetail } from "./types";

type SortKey = "takenAt" | "referenceM" | "errorMm" | "absError" | "limitMm";
type StatusFilter = "all" | "outside" | "within" | "excluded" | "flagged";
export const PAGE_SIZE = 20;

export type ShotTableProps = {
  rows: ReportShotRow[];
  details: Map<string, ShotDetail>;
  sessionLabels: Map<string, string>;
  canExclude: boolean;
  busyId: string | null;
  onExclude: (id: string, reason: string) => Promise<string | null>;
  onRestore: (id: string, reason: string) => Promise<string | null>;
};

export function ShotTable({ rows, details, sessionLabels, canExclude, busyId, onExclude, onRestore }: ShotTableProps) {
  const [sort, setSort] = useState<{ key: SortKey; dir: 1 | -1 }>({ key: "absError", dir: -1 });
  const [status, setStatus] = useState<StatusFilter>("all");
  const [session, setSession] = useState("");
  const [page, setPage] = useState(0);
  const [open, setOpen] = useState<string | null>(null);

  const filtered = useMemo(() => {
    const out = rows.filter((r) => {
      if (session && r.sessionId !== session) return false;
      if (status === "outside") return !r.within && !r.excluded;
      if (status === "within") return r.within && !r.excluded;
      if (status === "excluded") return r.excluded;
      if (status === "flagged") return r.flags.length > 0;
      return true;
    });
    const val = (r: ReportShotRow) => (sort.key === "absError" ? Math.abs(r.errorMm) : sort.key === "takenAt" ? Date.parse(r.takenAt) : r[sort.key]);
    return out.sort((a, b) => (val(a) - val(b)) * sort.dir || (a.id < b.id ? -1 : 1));
  }, [rows, status, session, sort]);

  const pages = Math.max(1, Math.ceil(filtered.length / PAGE_SIZE));
  const current = Math.min(page, pages - 1);
  const shown = filtered.slice(current * PAGE_SIZE, current * PAGE_SIZE + PAGE_SIZE);
  const sessions = [...new Set(rows.map((r) => r.sessionId))];

  function header(key: SortKey, label: string, right = true) {
    const active = sort.key === key;
    return (
      <th scope="col" className={`py-1 pr-2 ${right ? "text-right" : "text-left"}`} aria-sort={active ? (sort.dir === 1 ? "ascending" : "descending") : "none"}>
        <button
          type="button"
          className="min-h-11 font-bold underline-offset-4 hover:underline"
          onClick={() => {
            setSort(active ? { key, dir: sort.dir === 1 ? -1 : 1 } : { key, dir: key === "takenAt" || key === "referenceM" ? 1 : -1 });
            setPage(0);
          }}
        >
          {label} {active ? (sort.dir === 1 ? "▲" : "▼") : ""}
        </button>
      </th>
    );
  }

  return (
    <div data-testid="shot-table">
      <div className="mb-3 flex flex-wrap items-end gap-3">
        <div>
          <label htmlFor="shot-status" className="field-label">
            Show
          </label>
          <select
            id="shot-status"
            className="input"
            value={status}
            onChange={(e) => {
              setStatus(e.target.value as StatusFilter);
              setPage(0);
            }}
          >
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
          <select
            id="shot-session"
            className="input"
            value={session}
            onChange={(e) => {
              setSession(e.target.value);
              setPage(0);
            }}
          >
            <option value="">All sessions</option>
            {sessions.map((s) => (
              <option key={s} value={s}>
                {sessionLabels.get(s) ?? s.slice(0, 8)}
              </option>
            ))}
          </select>
        </div>
        <p className="pb-2 text-muted" aria-live="polite">
          {filtered.length} of {rows.length} shots
        </p>
      </div>
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
            {shown.length === 0 ? (
              <tr>
                <td colSpan={10} className="py-4 text-center text-muted">
                  No shots match these filters.
                </td>
              </tr>
            ) : null}
            {shown.map((r) => {
              const d = details.get(r.id);
              return (
                <ShotRow
                  key={r.id}
                  row={r}
                  detail={d}
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
              );
            })}
          </tbody>
        </table>
      </div>
      <nav aria-label="Shot table pages" className="mt-3 flex items-center gap-3">
        <button type="button" className="btn-secondary" disabled={current === 0} onClick={() => setPage(current - 1)}>
          ← Previous
        </button>
        <span className="num">
          Page {current + 1} of {pages}
        </span>
        <button type="button" className="btn-secondary" disabled={current >= pages - 1} onClick={() => setPage(current + 1)}>
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
