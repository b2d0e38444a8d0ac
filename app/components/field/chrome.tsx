// The frame of every field screen: the sub-navigation and a status line that says whether the
// tablet is online, when the reference data was last copied, and what waits in the outbox.
import { useEffect, useState } from "react";
import { NavLink } from "react-router";
import { VerdictShape } from "~/components/verdict-badge";
import { getMeta } from "~/offline/db";
import { useLiveQuery } from "~/offline/live";
import { outboxCounts, type OutboxCounts } from "~/offline/outbox";
import { syncStatus } from "~/offline/sync";
import type { SyncStatus } from "~/offline/types";

export function useOnline() {
  const [online, setOnline] = useState(true);
  useEffect(() => {
    setOnline(navigator.onLine);
    const on = () => setOnline(true);
    const off = () => setOnline(false);
    window.addEventListener("online", on);
    window.addEventListener("offline", off);
    return () => {
      window.removeEventListener("online", on);
      window.removeEventListener("offline", off);
    };
  }, []);
  return online;
}

export function formatWhen(iso: string | null | undefined) {
  if (!iso) return "never";
  const d = new Date(iso);
  if (Number.isNaN(d.getTime())) return iso;
  return d.toLocaleString("en-GB", { day: "numeric", month: "short", hour: "2-digit", minute: "2-digit" });
}

const EMPTY_COUNTS: OutboxCounts = { sessions: 0, shots: 0, photos: 0, rejected: 0, total: 0 };

export function useSyncStatus(): SyncStatus | null {
  return useLiveQuery(() => syncStatus(), [], null);
}

export function FieldChrome({ children }: { children: React.ReactNode }) {
  const online = useOnline();
  const copiedAt = useLiveQuery(() => getMeta<string>("referenceCopiedAt"), [], undefined);
  const counts = useLiveQuery(() => outboxCounts(), [], EMPTY_COUNTS);
  const status = useSyncStatus();
  const tab = ({ isActive }: { isActive: boolean }) =>
    `flex min-h-11 items-center rounded-md border-2 px-4 text-lg font-bold ${isActive ? "border-accent bg-accent text-accent-fg" : "border-line bg-bg"}`;
  return (
    <div className="space-y-4">
      <div className="flex flex-wrap items-center gap-x-6 gap-y-2 rounded-lg border-2 border-line bg-surface px-4 py-2" data-testid="field-status">
        <span className={`inline-flex items-center gap-2 font-bold ${online ? "text-pass" : "text-warn"}`} data-online={online}>
          {online ? <VerdictShape verdict="pass" /> : <VerdictShape verdict="insufficient" />}
          {online ? "Online" : "Offline — saving on this tablet"}
        </span>
        <span>
          Reference data copied: <strong data-testid="reference-copied-at">{copiedAt === undefined ? "…" : formatWhen(copiedAt)}</strong>
        </span>
        <NavLink to="/field/outbox" className="font-bold underline underline-offset-4" data-testid="outbox-count">
          Outbox: {counts.total === 0 ? "nothing waiting" : `${counts.total.toLocaleString("en-GB")} waiting`}
          {counts.rejected ? `, ${counts.rejected} need a fix` : ""}
        </NavLink>
        {status?.running ? (
          <span className="num">
            Sending {status.done.toLocaleString("en-GB")} of {status.total.toLocaleString("en-GB")}…
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
