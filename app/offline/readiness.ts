// "Ready to work offline?" for the field header. Ready means three things on this tablet: the
// service worker is active (the app's files are precached), it holds a copy of every field
// screen and of its data answer, and the reference data is in IndexedDB. The page asks the
// worker itself, through a MessageChannel, once the worker is ACTIVE (a message posted to a
// worker that is still installing is lost), and while signed in (a warm-up run while signed
// out only meets redirects to the sign-in page and keeps nothing).
import { useSyncExternalStore } from "react";

export type WorkerCopy = { pages: number; data: number; total: number };

export type Readiness = {
  /** none: no service worker in this browser (or a dev build); waiting: registering or installing. */
  worker: "unknown" | "none" | "waiting" | "active";
  copy: WorkerCopy | null;
  /** True while the worker is copying the field screens. */
  copying: boolean;
};

let state: Readiness = { worker: "unknown", copy: null, copying: false };
let lastWarm = 0;
const listeners = new Set<() => void>();

function set(p: Partial<Readiness>) {
  state = { ...state, ...p };
  for (const fn of listeners) fn();
}

export function readiness() {
  return state;
}

export function useReadiness(): Readiness {
  return useSyncExternalStore(
    (fn) => {
      listeners.add(fn);
      return () => listeners.delete(fn);
    },
    () => state,
    () => state,
  );
}

/** Whether the field screens will open with no network, given the reference copy's time. */
export function isReady(r: Readiness, referenceCopiedAt: string | null | undefined) {
  return r.worker === "active" && r.copy != null && r.copy.total > 0 && r.copy.pages >= r.copy.total && r.copy.data >= r.copy.total && Boolean(referenceCopiedAt);
}

function ask(worker: ServiceWorker, type: "WARM_FIELD_PAGES" | "FIELD_COPY_STATUS", timeoutMs: number): Promise<WorkerCopy | null> {
  return new Promise((resolve) => {
    const ch = new MessageChannel();
    const t = setTimeout(() => resolve(null), timeoutMs);
    ch.port1.onmessage = (e) => {
      clearTimeout(t);
      resolve(e.data as WorkerCopy);
    };
    worker.postMessage({ type }, [ch.port2]);
  });
}

/**
 * Brings this tablet to "ready offline": waits for an active worker, says what it already
 * holds, and (when `online`) asks it to copy the field screens now, while signed in.
 */
export async function prepareOffline({ online }: { online: boolean }) {
  if (typeof navigator === "undefined" || !("serviceWorker" in navigator) || !import.meta.env.PROD) {
    set({ worker: "none" });
    return;
  }
  const reg = await navigator.serviceWorker.getRegistration();
  if (!reg?.active) set({ worker: "waiting" });
  const ready = await navigator.serviceWorker.ready;
  const active = ready.active;
  if (!active) return;
  set({ worker: "active" });
  const kept = await ask(active, "FIELD_COPY_STATUS", 5000);
  if (kept) set({ copy: kept });
  if (!online) return;
  // Every return of the network calls this; a complete copy made minutes ago is enough.
  const complete = kept != null && kept.total > 0 && kept.pages >= kept.total && kept.data >= kept.total;
  if (complete && Date.now() - lastWarm < 10 * 60_000) return;
  lastWarm = Date.now();
  set({ copying: true });
  const warmed = await ask(active, "WARM_FIELD_PAGES", 60_000);
  set({ copying: false, ...(warmed ? { copy: warmed } : {}) });
}
