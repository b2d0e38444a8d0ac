// The sync client: sends the outbox through POST /api/sync in batches of at most 500 records,
// marks each record by the server's answer, then uploads photos (POST /api/photos) after
// their shots. Runs in the page (on start, on "online", on "Sync now") and in the service
// worker (Background Sync); a Web Lock keeps two contexts from sending at once. Resumable by
// construction: state lives per record in IndexedDB, and a record sent twice comes back
// "duplicate" (client-made ids), so an interrupted batch is simply sent again.
// A batch the server keeps failing on (500 while an empty request still succeeds) is split in
// halves until the record behind it stands alone; that record is marked stuck and the rest go.
import type { UpdateSpec } from "dexie";
import { deviceId, fieldDb } from "./db";
import { trackedFetch } from "./reach";
import type { FieldError, LocalSession, LocalShot, StuckMark } from "./types";
import { interruptibleSleep, isInterrupted, resetInterrupt } from "./sync-interrupt";
import { patchStatus } from "./sync-status";

// The status and the interruption live in their own small modules: the field screens read the status
// and the outbox interrupts a run without loading this engine, which the page imports only when it sends.
export { clearSignInPause, STATUS_KEY, syncStatus } from "./sync-status";
export { interruptSync } from "./sync-interrupt";

export const MAX_BATCH = 500;

export type SyncOptions = {
  fetchImpl?: typeof fetch;
  batchSize?: number;
  /** Tries per request before this run gives up (network errors, 5xx, 429). */
  maxAttempts?: number;
  baseDelayMs?: number;
  sleep?: (ms: number) => Promise<void>;
};

export type SyncOutcome = {
  ok: boolean;
  reason?: "auth" | "forbidden" | "offline" | "server" | "busy";
  sent: number;
  rejected: number;
  photos: number;
  /** Records the server failed on alone (kept queued, marked stuck). */
  stuck: number;
};

let runningHere = false;

/** Runs one sync unless another tab or the worker is already sending. */
export async function syncOutbox(opts: SyncOptions = {}): Promise<SyncOutcome> {
  const busy: SyncOutcome = { ok: false, reason: "busy", sent: 0, rejected: 0, photos: 0, stuck: 0 };
  const locks = (globalThis.navigator as Navigator | undefined)?.locks;
  if (locks?.request) {
    return locks.request("shotbook-sync", { ifAvailable: true }, async (lock) => (lock ? run(opts) : busy));
  }
  if (runningHere) return busy;
  runningHere = true;
  try {
    return await run(opts);
  } finally {
    runningHere = false;
  }
}

type Item = { kind: "session"; row: LocalSession } | { kind: "shot"; row: LocalShot };
type Attempt =
  | { kind: "ok"; res: Response }
  /** The server was reached and failed (500): maybe this batch's content, maybe the server. */
  | { kind: "failing"; res: Response; message: string }
  | { kind: "stop"; outcome: SyncOutcome["reason"]; message: string };

/**
 * Statuses that may come from one record the server cannot handle. 502, 503 and 504 come from
 * a proxy, a restart or our own "another sync at the same moment": the server, not the batch.
 */
function mayBeContent(status: number) {
  return status >= 500 && status !== 502 && status !== 503 && status !== 504;
}
/** Tries a batch that may be poisoned gets before it is probed and split (one retry for a blip). */
const CONTENT_ATTEMPTS = 2;

const defaultSleep = (ms: number) => new Promise<void>((r) => setTimeout(r, ms));

function backoff(base: number, attempt: number) {
  const ms = Math.min(base * 2 ** attempt, 30_000);
  return ms / 2 + Math.random() * (ms / 2);
}

/** The server's Retry-After (seconds or an HTTP date, RFC 9110 §10.2.3) in ms, capped at 5 minutes. */
export function retryAfterMs(res: Response, now = Date.now()): number | null {
  const v = res.headers.get("Retry-After")?.trim();
  if (!v) return null;
  const ms = /^\d+$/.test(v) ? Number(v) * 1000 : Date.parse(v) - now;
  return Number.isFinite(ms) ? Math.min(Math.max(ms, 0), 300_000) : null;
}

/**
 * One request with retries: network errors, 5xx, 408 and 429 back off and try again. With
 * `isolate`, a status that may be the batch's own content (500) comes back as "failing" after
 * CONTENT_ATTEMPTS tries, for the caller to find the record behind it.
 */
async function send(make: () => Promise<Response>, o: Required<Pick<SyncOptions, "maxAttempts" | "baseDelayMs" | "sleep">>, isolate = false): Promise<Attempt> {
  let lastMessage = "";
  let contentFailures = 0;
  let asked: number | null = null; // the wait the server asked for, if it did
  for (let attempt = 0; attempt < o.maxAttempts; attempt++) {
    if (attempt > 0) {
      const wait = Math.max(backoff(o.baseDelayMs, attempt - 1), asked ?? 0);
      await patchStatus({ nextRetryAt: new Date(Date.now() + wait).toISOString(), lastError: lastMessage });
      await interruptibleSleep(o.sleep, wait);
    }
    if (isInterrupted()) return { kind: "stop", outcome: "busy", message: "Sending paused for a change on this tablet; it goes on in a moment." };
    try {
      const res = await make();
      if (res.status === 401) return { kind: "stop", outcome: "auth", message: "Your sign-in has ended: sign in to send. Everything stays queued." };
      if (res.status === 403) return { kind: "stop", outcome: "forbidden", message: "Your role may not send field records." };
      if (res.status >= 500 || res.status === 408 || res.status === 429) {
        asked = retryAfterMs(res);
        lastMessage = `The server answered ${res.status}; trying again.`;
        if (isolate && mayBeContent(res.status) && ++contentFailures >= Math.min(CONTENT_ATTEMPTS, o.maxAttempts)) {
          return { kind: "failing", res, message: await errorText(res) };
        }
        continue;
      }
      return { kind: "ok", res };
    } catch {
      asked = null;
      lastMessage = "No connection to the server; trying again.";
    }
  }
  return { kind: "stop", outcome: lastMessage.startsWith("No connection") ? "offline" : "server", message: lastMessage || "The server did not answer." };
}

async function errorText(res: Response) {
  try {
    const body = (await res.clone().json()) as { error?: string };
    if (body?.error) return body.error;
  } catch {}
  return `The server answered ${res.status}.`;
}

function chunk(items: Item[], size: number): Item[][] {
  const out: Item[][] = [];
  for (let i = 0; i < items.length; i += size) out.push(items.slice(i, i + size));
  return out;
}

async function run(opts: SyncOptions): Promise<SyncOutcome> {
  resetInterrupt();
  const db = fieldDb();
  const baseFetch = opts.fetchImpl ?? ((input: RequestInfo | URL, init?: RequestInit) => fetch(input, init));
  // Every answer (or its absence) tells the page whether the server is reachable (reach.ts).
  const fetchImpl = (input: RequestInfo | URL, init?: RequestInit) => trackedFetch(baseFetch, input, init);
  const o = { maxAttempts: opts.maxAttempts ?? 5, baseDelayMs: opts.baseDelayMs ?? 1000, sleep: opts.sleep ?? defaultSleep };
  const size = Math.max(1, Math.min(opts.batchSize ?? MAX_BATCH, MAX_BATCH));
  const outcome: SyncOutcome = { ok: true, sent: 0, rejected: 0, photos: 0, stuck: 0 };

  const sessions = await db.sessions.where("state").equals("queued").sortBy("queuedAt");
  const blocked = new Set(await db.sessions.where("state").equals("rejected").primaryKeys());
  // A shot of a rejected or stuck session waits for its session rather than fail for it.
  for (const s of sessions) if (s.stuck) blocked.add(s.id);
  const shots = (await db.shots.where("state").equals("queued").sortBy("queuedAt")).filter((s) => !blocked.has(s.sessionId));
  const photoCount = await db.photos.where("state").equals("queued").count();
  const fresh: Item[] = [
    ...sessions.filter((row) => !row.stuck).map((row) => ({ kind: "session" as const, row })),
    ...shots.filter((row) => !row.stuck).map((row) => ({ kind: "shot" as const, row })),
  ];
  // Records the server failed on before go last, each on its own: they never hold the rest back.
  const stuckItems: Item[] = [
    ...sessions.filter((row) => row.stuck).map((row) => ({ kind: "session" as const, row })),
    ...shots.filter((row) => row.stuck).map((row) => ({ kind: "shot" as const, row })),
  ];
  const total = fresh.length + stuckItems.length + photoCount;
  if (total === 0) {
    await patchStatus({ running: false, phase: "idle", done: 0, total: 0, needsSignIn: false, lastError: null, nextRetryAt: null });
    return outcome;
  }
  await patchStatus({ running: true, phase: "records", done: 0, total, needsSignIn: false, lastError: null, nextRetryAt: null });
  const device = await deviceId();
  let done = 0;

  const stop = async (reason: SyncOutcome["reason"], message: string) => {
    await patchStatus({ running: false, phase: "idle", needsSignIn: reason === "auth", lastError: message });
    return { ...outcome, ok: false, reason };
  };
  const post = (batch: Item[]) =>
    fetchImpl("/api/sync", {
      method: "POST",
      headers: { "Content-Type": "application/json", Accept: "application/json" },
      body: JSON.stringify({
        deviceId: device,
        sessions: batch.filter((i) => i.kind === "session").map((i) => i.row.record),
        shots: batch.filter((i) => i.kind === "shot").map((i) => i.row.record),
      }),
      credentials: "same-origin",
    });
  /** Does the server handle a request at all? An empty sync writes nothing and answers 200. */
  const serverWorks = async () => {
    try {
      return (await post([])).ok;
    } catch {
      return false;
    }
  };

  const work = [...chunk(fresh, size), ...stuckItems.map((i) => [i])];
  const stuckIds = new Set(stuckItems.map((i) => i.row.id));
  while (work.length) {
    const batch = work.shift()!;
    // a record that failed before gets one try a run: it is stuck until the server takes it
    const retrying = batch.length === 1 && stuckIds.has(batch[0]!.row.id);
    const a = await send(() => post(batch), retrying ? { ...o, maxAttempts: 1 } : o, true);
    if (a.kind === "stop") {
      if (retrying && a.outcome === "server") {
        done += 1;
        continue;
      }
      return stop(a.outcome, a.message);
    }
    if (a.kind === "failing") {
      if (!retrying && !(await serverWorks())) {
        const said = a.message.startsWith("The server answered") ? a.message : `The server answered ${a.res.status}: ${a.message}`;
        return stop("server", `${said.replace(/\.?$/, ".")} Everything stays queued; trying again later.`);
      }
      if (batch.length > 1) {
        const half = Math.ceil(batch.length / 2);
        work.unshift(batch.slice(0, half), batch.slice(half));
        continue;
      }
      const item = batch[0]!;
      await markStuck(item, { message: a.message, status: a.res.status, at: new Date().toISOString() });
      outcome.stuck += 1;
      done += 1;
      if (item.kind === "session") {
        // its shots would only be refused as "session unknown": they wait for it
        for (let b = 0; b < work.length; b++) {
          const keep = work[b]!.filter((i) => !(i.kind === "shot" && i.row.sessionId === item.row.id));
          done += work[b]!.length - keep.length;
          work[b] = keep;
        }
        for (let b = work.length - 1; b >= 0; b--) if (!work[b]!.length) work.splice(b, 1);
      }
      await patchStatus({ done });
      continue;
    }
    const res = a.res;
    if (res.status === 413 && batch.length > 1) {
      const half = Math.ceil(batch.length / 2);
      work.unshift(batch.slice(0, half), batch.slice(half));
      continue;
    }
    if (!res.ok) {
      // 400: the server wrote nothing and says why; keep the records, show the reason on each.
      const message = await errorText(res);
      await markAll(batch, [{ path: "", message }]);
      outcome.rejected += batch.length;
    } else {
      let results: { kind: string; id: string; status: string; errors?: FieldError[] }[] = [];
      try {
        results = ((await res.json()) as { results: typeof results }).results ?? [];
      } catch {
        return stop("server", "The server's answer could not be read; the records stay queued.");
      }
      const r = await applyResults(results);
      outcome.sent += r.synced;
      outcome.rejected += r.rejected;
    }
    done += batch.length;
    await patchStatus({ done, lastError: null, nextRetryAt: null });
  }

  await patchStatus({ phase: "photos" });
  const photos = await db.photos.where("state").equals("queued").sortBy("queuedAt");
  for (const p of photos) {
    const shot = await db.shots.get(p.shotId);
    if (!shot || shot.state !== "synced") {
      done += 1;
      continue; // its shot is not on the server yet: the photo waits
    }
    const a = await send(() => {
      const form = new FormData();
      form.append("shotId", p.shotId);
      form.append("file", p.blob, p.name);
      return fetchImpl("/api/photos", { method: "POST", body: form, credentials: "same-origin" });
    }, o);
    if (a.kind === "stop") return stop(a.outcome, a.message);
    if (a.res.ok) {
      await db.photos.update(p.id, { state: "synced", syncedAt: new Date().toISOString(), errors: [] });
      outcome.photos += 1;
    } else {
      await db.photos.update(p.id, { state: "rejected", errors: [{ path: "file", message: await errorText(a.res) }] });
      outcome.rejected += 1;
    }
    done += 1;
    await patchStatus({ done });
  }

  await patchStatus({ running: false, phase: "idle", done, lastSyncAt: new Date().toISOString(), lastError: null, nextRetryAt: null, needsSignIn: false });
  return outcome;
}

async function markStuck(item: Item, stuck: StuckMark) {
  const db = fieldDb();
  const table = item.kind === "session" ? db.sessions : db.shots;
  // still queued: nothing is lost, and a fix or the next run sends it again
  await table.update(item.row.id, { stuck });
}

async function markAll(batch: Item[], errors: FieldError[]) {
  const db = fieldDb();
  await db.transaction("rw", db.sessions, db.shots, async () => {
    for (const i of batch) {
      const table = i.kind === "session" ? db.sessions : db.shots;
      await table.update(i.row.id, { state: "rejected", errors, stuck: undefined });
    }
  });
}

async function applyResults(results: { kind: string; id: string; status: string; errors?: FieldError[] }[]) {
  const db = fieldDb();
  const now = new Date().toISOString();
  let synced = 0;
  let rejected = 0;
  const sessionChanges: { key: string; changes: UpdateSpec<LocalSession> }[] = [];
  const shotChanges: { key: string; changes: UpdateSpec<LocalShot> }[] = [];
  const acceptedSessions: string[] = [];
  for (const r of results) {
    if (r.kind !== "session" && r.kind !== "shot") continue;
    const list = (r.kind === "session" ? sessionChanges : shotChanges) as { key: string; changes: UpdateSpec<LocalShot & LocalSession> }[];
    if (r.status === "accepted" || r.status === "duplicate") {
      list.push({ key: r.id, changes: { state: "synced", result: r.status, syncedAt: now, errors: [], stuck: undefined } });
      synced++;
      if (r.kind === "session") acceptedSessions.push(r.id);
    } else if (r.status === "rejected") {
      const errors = Array.isArray(r.errors) && r.errors.length ? r.errors : [{ path: "", message: "The server refused this record." }];
      list.push({ key: r.id, changes: { state: "rejected", errors, stuck: undefined } });
      rejected++;
    }
  }
  // One bulk write per table, not one update per record: a 500-record answer used to queue a
  // thousand IndexedDB requests (a read and a write each) on the page's main thread.
  await db.transaction("rw", db.sessions, db.shots, async () => {
    if (sessionChanges.length) await db.sessions.bulkUpdate(sessionChanges);
    // a session the server took at last: its shots refused only for its sake go again (before
    // this answer's own shot results, which stand)
    for (const id of acceptedSessions) {
      await db.shots
        .where("[sessionId+state]")
        .equals([id, "rejected"])
        .modify((s) => {
          if (s.errors.length && s.errors.every((e) => e.path === "sessionId")) {
            s.state = "queued";
            s.errors = [];
          }
        });
    }
    if (shotChanges.length) await db.shots.bulkUpdate(shotChanges);
  });
  return { synced, rejected };
}
