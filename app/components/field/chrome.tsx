// The frame of every field screen: the sub-navigation and a status line that says whether the
// tablet is online, when the reference data was last copied, and what waits in the outbox.
import { useSyncExternalStore } from "react";
import { NavLink } from "react-router";
import { VerdictShape } from "~/components/verdict-badge";
import { getMeta } from "~/offline/db";
import { useLiveQuery } from "~/offline/live";
import { outboxCounts, type OutboxCounts } from "~/offline/outbox";
import { onReachChange, reach, type Reach } from "~/offline/reach";
import { isReady, useReadiness, type Readiness } from "~/offline/readiness";
import { syncStatus } from "~/offline/sync-status";
import type { SyncStatus } from "~/offline/types";

/**
 * Whether the server answers (reach.ts), not navigator.onLine. Before the first answer or
 * silence the tablet says it is checking; "unknown" counts as online for the screens' logic.
 */
export function useReach(): Reach {
  return useSyncExternalStore(onReachChange, reach, () => "unknown" as Reach);
}

export function useOnline() {
  return useReach() !== "unreachable";
}

/** The tablet's UTC offset, e.g. "UTC+01:00" (crews cross time zones; the server keeps the offset too). */
export function offsetLabel(d: Date) {
  const off = -d.getTimezoneOffset();
  const a = Math.abs(off);
  return `UTC${off >= 0 ? "+" : "−"}${String(Math.floor(a / 60)).padStart(2, "0")}:${String(a % 60).padStart(2, "0")}`;
}

// One formatter for every call (the outbox lists up to a hundred times at once).
const WHEN = new Intl.DateTimeFormat("en-GB", { day: "numeric", month: "short", hour: "2-digit", minute: "2-digit" });

/** A time in the tablet's local time with its offset: "2 Dec, 09:41 UTC+01:00". */
export function formatWhen(iso: string | null | undefined) {
  if (!iso) return "never";
  const d = new Date(iso);
  if (Number.isNaN(d.getTime())) return iso;
  return `${WHEN.format(d)} ${offsetLabel(d)}`;
}

const EMPTY_COUNTS: OutboxCounts = { sessions: 0, shots: 0, photos: 0, rejected: 0, total: 0 };

export function useSyncStatus(): SyncStatus | null {
  return useLiveQuery(() => syncStatus(), [], null);
}

function OfflineReadiness({ r, copiedAt }: { r: Readiness; copiedAt: string | null | undefined }) {
  const when = (
    <strong className="num" data-testid="reference-copied-at">
      {copiedAt === undefined ? "…" : formatWhen(copiedAt)}
    </strong>
  );
  if (r.worker === "none") {
    return (
      <span data-testid="offline-ready" data-ready="false">
        Reference data copied: {when}
      </span>
    );
  }
  if (isReady(r, copiedAt)) {
    return (
      <span className="inline-flex flex-wrap items-center gap-x-2" data-testid="offline-ready" data-ready="true">
        <span className="inline-flex items-center gap-2 font-bold text-pass">
          <VerdictShape verdict="pass" /> Ready to work offline
        </span>{" "}
        <span>· reference data copied {when}</span>
      </span>
    );
  }
  if (r.worker === "unknown") {
    // Not looked yet (the first moments after a page load): no false "not ready" alarm.
    return (
      <span className="text-muted" data-testid="offline-ready" data-ready="false">
        Checking that this tablet is ready offline… · reference data copied {when}
      </span>
    );
  }
  const steps = [
    { label: "app files", done: r.worker === "active" },
    {
      label: r.copy ? `field screens ${Math.min(r.copy.pages, r.copy.data)} of ${r.copy.total}` : "field screens",
      done: r.copy != null && r.copy.total > 0 && r.copy.pages >= r.copy.total && r.copy.data >= r.copy.total,
    },
    { label: "reference data", done: Boolean(copiedAt) },
  ];
  const done = steps.filter((s) => s.done).length;
  return (
    <span className="inline-flex flex-wrap items-center gap-x-2" data-testid="offline-ready" data-ready="false">
      <span className="inline-flex items-center gap-2 font-bold text-warn">
        <VerdictShape verdict="insufficient" /> Not ready offline yet — stay online a moment
      </span>{" "}
      <span className="num">
        ({done} of 3 done: {steps.map((s) => `${s.label} ${s.done ? "✓" : "…"}`).join(", ")})
      </span>{" "}
      <span>· reference data copied {when}</span>
    </span>
  );
}

export function FieldChrome({ children }: { children: React.ReactNode }) {
  const reachState = useReach();
  const online = reachState !== "unreachable";
  const readiness = useReadiness();
  const copiedAt = useLiveQuery(() => getMeta<string>("referenceCopiedAt"), [], undefined);
  const counts = useLiveQuery(() => outboxCounts(), [], EMPTY_COUNTS);
  const status = useSyncStatus();
  const tab = ({ isActive }: { isActive: boolean }) =>
    `flex min-h-11 items-center rounded-md border-2 px-4 text-lg font-bold ${isActive ? "border-accent bg-accent text-accent-fg" : "border-line bg-bg"}`;
  const waiting = counts.total - counts.rejected;
  return (
    <div className="space-y-4">
      <div className="flex flex-wrap items-center gap-x-6 gap-y-1 rounded-lg border-2 border-line bg-surface px-4 py-1" data-testid="field-status">
        <span className={`inline-flex min-h-11 items-center gap-2 font-bold ${online ? "text-pass" : "text-warn"}`} data-online={online} data-reach={reachState} role="status">
          {online ? <VerdictShape verdict="pass" /> : <VerdictShape verdict="insufficient" />}
          {reachState === "unknown" ? "Checking the connection…" : online ? "Online" : "Offline — saving on this tablet"}
        </span>
        <OfflineReadiness r={readiness} copiedAt={copiedAt} />
        <NavLink to="/field/outbox" className="inline-flex min-h-11 items-center font-bold underline underline-offset-4" data-testid="outbox-count">
          Outbox:{" "}
          {counts.total === 0
            ? "nothing waiting"
            : [waiting ? `${waiting.toLocaleString("en-GB")} waiting` : "", counts.rejected ? `${counts.rejected.toLocaleString("en-GB")} need a fix` : ""].filter(Boolean).join(", ")}
        </NavLink>
        {status?.running ? (
          <span className="num">
            {status.lastError ? "Retrying: " : "Sending "}
            {status.done.toLocaleString("en-GB")} of {status.total.toLocaleString("en-GB")} sent…
          </span>
        ) : null}
        {status?.needsSignIn ? (
          <a className="btn" href="/login?redirectTo=%2Ffield%2Foutbox">
            Sign in to send
          </a>
        ) : null}
      </div>
      <nav aria-label="Field screens" className="flex flex-wrap gap-2">
        <NavLink to="/field" end className={tab}>
          Sessions
        </NavLink>
        <NavLink to="/field/outbox" className={tab}>
          Outbox
        </NavLink>
      </nav>
      {children}
    </div>
  );
}

export function FieldLoading() {
  return (
    <div className="card" role="status">
      <p className="text-lg">Opening the field screens from this tablet…</p>
    </div>
  );
}
