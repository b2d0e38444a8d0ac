// The sync client: sends the outbox through POST /api/sync in batches of at most 500 records,
// marks each record by the server's answer, then uploads photos (POST /api/photos) after
// their shots. Runs in the page (on start, on "online", on "Sync now") and in the service
// worker (Background Sync); a Web Lock keeps two contexts from sending at once. Resumable by
// construction: state lives per record in IndexedDB, and a record sent twice comes back
// "duplicate" (client-made ids), so an interrupted batch is simply sent again.
import { deviceId, fieldDb, getMeta, setMeta } from "./db";
import { trackedFetch } from "./reach";
import type { FieldError, LocalSession, LocalShot, SyncStatus } from "./types";

export const MAX_BATCH = 500;
export const STATUS_KEY = "syncStatus";

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
};

const IDLE: SyncStatus = {
  running: false,
  phase: "idle",
  done: 0,
  total: 0,
  needsSignIn: false,
  lastError: null,
  lastSyncAt: null,
  nextRetryAt: null,
  updatedAt: 0,
};

export async function syncStatus(): Promise<SyncStatus> {
  const s = { ...IDLE, ...((await getMeta<SyncStatus>(STATUS_KEY)) ?? {}) };
  if (s.running && Date.now() - s.updatedAt > 60_000) s.running = false;
  return s;
}

async function patchStatus(p: Partial<SyncStatus>) {
  const cur = await syncStatus();
  await setMeta(STATUS_KEY, { ...cur, ...p, updatedAt: Date.now() });
}

let runningHere = false;

/** Runs one sync unless another tab or the worker is already sending. */
export async function syncOutbox(opts: SyncOptions = {}): Promise<SyncOutcome> {
  const busy: SyncOutcome = { ok: false, reason: "busy", sent: 0, rejected: 0, photos: 0 };
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
type Attempt = { kind: "ok"; res: Response } | { kind: "stop"; outcome: SyncOutcome["reason"]; message: string };

const defaultSleep = (ms: number) => new Promise<void>((r) => setTimeout(r, ms));

function backoff(base: number, attempt: number) {
  const ms = Math.min(base * 2 ** attempt, 30_000);
  return ms / 2 + Math.random() * (ms / 2);
}

/** One request with retries: network errors, 5xx, 408 and 429 back off and try again. */
async function send(make: () => Promise<Response>, o: Required<Pick<SyncOptions, "maxAttempts" | "baseDelayMs" | "sleep">>): Promise<Attempt> {
  let lastMessage = "";
  for (let attempt = 0; attempt < o.maxAttempts; attempt++) {
    if (attempt > 0) {
      const wait = backoff(o.baseDelayMs, attempt - 1);
      await patchStatus({ nextRetryAt: new Date(Date.now() + wait).toISOString(), lastError: lastMessage });
      await o.sleep(wait);
    }
    try {
      const res = await make();
      if (res.status === 401) return { kind: "stop", outcome: "auth", message: "Your sign-in has ended: sign in to send. Everything stays queued." };
      if (res.status === 403) return { kind: "stop", outcome: "forbidden", message: "Your role may not send field records." };
      if (res.status >= 500 || res.status === 408 || res.status === 429) {
        lastMessage = `The server answered ${res.status}; trying again.`;
        continue;
      }
      return { kind: "ok", res };
    } catch {
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
  const db = fieldDb();
  const baseFetch = opts.fetchImpl ?? ((input: RequestInfo | URL, init?: RequestInit) => fetch(input, init));
  // Every answer (or its absence) tells the page whether the server is reachable (reach.ts).
  const fetchImpl = (input: RequestInfo | URL, init?: RequestInit) => trackedFetch(baseFetch, input, init);
  const o = { maxAttempts: opts.maxAttempts ?? 5, baseDelayMs: opts.baseDelayMs ?? 1000, sleep: opts.sleep ?? defaultSleep };
  const size = Math.max(1, Math.min(opts.batchSize ?? MAX_BATCH, MAX_BATCH));
  const outcome: SyncOutcome = { ok: true, sent: 0, rejected: 0, photos: 0 };

  const sessions = await db.sessions.where("state").equals("queued").sortBy("queuedAt");
  const blocked = new Set(await db.sessions.where("state").equals("rejected").primaryKeys());
  // A shot of a rejected session waits for its session to be fixed rather than fail for it.
  const shots = (await db.shots.where("state").equals("queued").sortBy("queuedAt")).filter((s) => !blocked.has(s.sessionId));
  const photoCount = await db.photos.where("state").equals("queued").count();
  const items: Item[] = [...sessions.map((row) => ({ kind: "session" as const, row })), ...shots.map((row) => ({ kind: "shot" as const, row }))];
  const total = items.length + photoCount;
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

  const work = chunk(items, size);
  while (work.length) {
    const batch = work.shift()!;
    const body = JSON.stringify({
      deviceId: device,
      sessions: batch.filter((i) => i.kind === "session").map((i) => i.row.record),
      shots: batch.filter((i) => i.kind === "shot").map((i) => i.row.record),
    });
    const a = await send(
      () => fetchImpl("/api/sync", { method: "POST", headers: { "Content-Type": "application/json", Accept: "application/json" }, body, credentials: "same-origin" }),
      o,
    );
    if (a.kind === "stop") return stop(a.outcome, a.message);
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

async function markAll(batch: Item[], errors: FieldError[]) {
  const db = fieldDb();
  await db.transaction("rw", db.sessions, db.shots, async () => {
    for (const i of batch) {
      const table = i.kind === "session" ? db.sessions : db.shots;
      await table.update(i.row.id, { state: "rejected", errors });
    }
  });
}

async function applyResults(results: { kind: string; id: string; status: string; errors?: FieldError[] }[]) {
  const db = fieldDb();
  const now = new Date().toISOString();
  let synced = 0;
  let rejected = 0;
  await db.transaction("rw", db.sessions, db.shots, async () => {
    for (const r of results) {
      const table = r.kind === "session" ? db.sessions : r.kind === "shot" ? db.shots : null;
      if (!table) continue;
      if (r.status === "accepted" || r.status === "duplicate") {
        await table.update(r.id, { state: "synced", result: r.status, syncedAt: now, errors: [] });
        synced++;
      } else if (r.status === "rejected") {
        const errors = Array.isArray(r.errors) && r.errors.length ? r.errors : [{ path: "", message: "The server refused this record." }];
        await table.update(r.id, { state: "rejected", errors });
        rejected++;
      }
    }
  });
  return { synced, rejected };
}

/** The page clears a stale "sign in to send" once the server knows the user again. */
export async function clearSignInPause() {
  const s = await syncStatus();
  if (s.needsSignIn) await patchStatus({ needsSignIn: false, lastError: null });
}
