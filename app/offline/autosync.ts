// When the page sends: at start, whenever the server answers again after a silence (reach.ts), after a save (a short
// pause first, so a burst of shots goes in one batch), on "Sync now", and again later after a
// failed run. Where the browser has Background Sync, the worker is asked to send as well, so
// the outbox also drains after the tab is closed.
import { onReachChange, reach, watchReach } from "./reach";
import { outboxCounts } from "./outbox";
import type { SyncOutcome } from "./sync";

const TAG = "shotbook-outbox";
let timer: ReturnType<typeof setTimeout> | undefined;
let retryTimer: ReturnType<typeof setTimeout> | undefined;
let started = false;

/**
 * The back-off pause between tries, cut short the moment the server answers again (the
 * reachability probe), so a run waiting out a long back-off sends as soon as the network returns.
 */
function wakeableSleep(ms: number) {
  return new Promise<void>((resolve) => {
    const done = () => {
      clearTimeout(t);
      off();
      resolve();
    };
    const t = setTimeout(done, ms);
    const off = onReachChange((r) => {
      if (r === "reachable") done();
    });
  });
}

export async function syncNow(): Promise<SyncOutcome> {
  clearTimeout(timer);
  // The sync engine loads when the page first sends, not with the field screen (its first draw stays small).
  const { syncOutbox } = await import("./sync");
  const out = await syncOutbox({ sleep: wakeableSleep });
  clearTimeout(retryTimer);
  if (!out.ok && (out.reason === "offline" || out.reason === "server")) {
    retryTimer = setTimeout(() => void syncNow(), 60_000);
  } else if (!out.ok && out.reason === "busy") {
    // The worker (Background Sync) or another tab holds the send: look again shortly, so a run
    // that fails there does not leave this page waiting for the next network change.
    retryTimer = setTimeout(() => void syncNow(), 5_000);
  }
  return out;
}

/** After a save: sync soon if online, and leave a Background Sync request for the worker. */
export function syncSoon(delayMs = 1500) {
  void registerBackgroundSync();
  if (reach() === "unreachable") return;
  clearTimeout(timer);
  timer = setTimeout(() => void syncNow(), delayMs);
}

export async function registerBackgroundSync() {
  try {
    if (!("serviceWorker" in navigator)) return;
    const reg = await navigator.serviceWorker.getRegistration();
    const sync = (reg as (ServiceWorkerRegistration & { sync?: { register(tag: string): Promise<void> } }) | undefined)?.sync;
    await sync?.register(TAG);
  } catch {
    // Background Sync missing or refused: the page's own triggers remain.
  }
}

/** Called once by the field layout. */
export function startAutoSync() {
  if (started || typeof window === "undefined") return;
  started = true;
  onReachChange((r) => {
    if (r === "reachable") void syncNow();
  });
  watchReach();
  if (reach() === "reachable") void syncNow();
  // A backstop: whatever waits goes out within a minute while the server answers, even when no
  // save or network change prompted it (a session started and left without shots, say).
  setInterval(() => {
    if (reach() === "unreachable") return;
    void outboxCounts().then((c) => {
      if (c.total - c.rejected > 0) void syncNow();
    });
  }, 45_000);
}
