// Is the server reachable? Judged by the server's own answers, never by navigator.onLine (a
// tablet on a dead hotspot, behind a captive portal or a switched-off proxy still says "online").
// Any answer from the server (even 401 or 500) means reachable; a failed or timed-out request
// means unreachable until a later request succeeds. While unreachable, a light probe
// (GET /healthz) asks again every few seconds, and at once when the browser reports a change.
// Module state per JavaScript context: the page and the service worker each keep their own.

export type Reach = "unknown" | "reachable" | "unreachable";

let state: Reach = "unknown";
let since = 0;
const listeners = new Set<(r: Reach) => void>();

export function reach(): Reach {
  return state;
}

function set(next: Reach) {
  if (next === state) return;
  state = next;
  since = Date.now();
  for (const fn of listeners) fn(next);
}

/** A request got an HTTP answer from the server (any status). */
export function markReachable() {
  set("reachable");
}

/** A request to the server failed with no answer (network error, timeout, proxy refused). */
export function markUnreachable() {
  set("unreachable");
}

export function onReachChange(fn: (r: Reach) => void): () => void {
  listeners.add(fn);
  return () => listeners.delete(fn);
}

/** How long the current state has held (ms). */
export function reachAge() {
  return since ? Date.now() - since : 0;
}

const PROBE_TIMEOUT_MS = 6000;

/** Asks the server once; updates the state from the answer (or the lack of one). */
export async function probe(fetchImpl: typeof fetch = (i, init) => fetch(i, init)): Promise<Reach> {
  const ctrl = new AbortController();
  const t = setTimeout(() => ctrl.abort(), PROBE_TIMEOUT_MS);
  try {
    await fetchImpl("/healthz", { cache: "no-store", signal: ctrl.signal, headers: { Accept: "application/json" } });
    markReachable();
  } catch {
    markUnreachable();
  } finally {
    clearTimeout(t);
  }
  return state;
}

let watching = false;

/**
 * The page's watch: probe now, then every `offlineEveryMs` while unreachable and every
 * `onlineEveryMs` while reachable (a quiet tablet still notices the network going away).
 */
export function watchReach({ offlineEveryMs = 4000, onlineEveryMs = 30_000 } = {}) {
  if (watching || typeof window === "undefined") return;
  watching = true;
  let timer: ReturnType<typeof setTimeout> | undefined;
  const schedule = (ms: number) => {
    clearTimeout(timer);
    timer = setTimeout(() => void loop(), ms);
  };
  const loop = async () => {
    clearTimeout(timer);
    const r = await probe();
    schedule(r === "reachable" ? onlineEveryMs : offlineEveryMs);
  };
  // The browser's own events are hints only: ask the server straight away.
  window.addEventListener("online", () => void loop());
  window.addEventListener("offline", () => void loop());
  // Another request's answer (a sync, the reference copy) restarts the probe clock.
  onReachChange((r) => schedule(r === "reachable" ? onlineEveryMs : offlineEveryMs));
  void loop();
}

/** fetch that reports what happened to the reachability state. */
export async function trackedFetch(fetchImpl: typeof fetch, input: RequestInfo | URL, init?: RequestInit): Promise<Response> {
  try {
    const res = await fetchImpl(input, init);
    markReachable();
    return res;
  } catch (e) {
    markUnreachable();
    throw e;
  }
}
