// The sync worker pool (issue 16): POST /api/sync's zod validation, canonical JSON, ranging
// computation and insert rows run on worker threads, so a 500-shot batch never holds the
// thread that answers every other request. tinypool (the pool vitest itself uses) keeps the
// threads warm and queues batches when all are busy.
//
// SYNC_WORKERS = number of threads; 0 runs the same stages on the request's thread in small
// slices that yield (sync-work.ts). Default: one thread less than the machine's cores (at
// least 1) under NODE_ENV=production (the built server, `npm start`), 0 otherwise (tests,
// dev, the CLI: there module mocks and one-process debugging matter more).
import { existsSync } from "node:fs";
import { availableParallelism } from "node:os";
import { fileURLToPath } from "node:url";
import Tinypool from "tinypool";
import { syncWorkerUrl } from "./sync-worker-url.server";
import { checkpointsOnReportPool } from "./report-pool.server";

/** Set in a sync worker's environment when the report threads checkpoint the WAL (decision 0011). */
export const DEFER_CHECKPOINTS_ENV = "SHOTBOOK_DEFER_CHECKPOINTS";

let pool: Tinypool | null | undefined;

export function syncWorkerCount(env: NodeJS.ProcessEnv = process.env): number {
  const v = env.SYNC_WORKERS;
  if (v !== undefined && v !== "") {
    const n = Number(v);
    if (!Number.isInteger(n) || n < 0 || n > 64) throw new Error(`SYNC_WORKERS must be a whole number from 0 to 64 (got "${v}")`);
    return n;
  }
  return env.NODE_ENV === "production" ? Math.max(1, Math.min(4, availableParallelism() - 1)) : 0;
}

/** The pool, started on first use; null when sync runs on the request's thread. */
export function syncPool(): Tinypool | null {
  if (pool !== undefined) return pool;
  const threads = syncWorkerCount();
  if (!threads) return (pool = null);
  const file = fileURLToPath(syncWorkerUrl);
  if (!existsSync(file)) {
    // a build without its worker chunk must still take syncs: slower, never refused
    console.error(`sync: the worker module ${file} is missing; syncing on the request thread`);
    return (pool = null);
  }
  pool = new Tinypool({
    // from the sources the worker is TypeScript: a small JavaScript module loads it through tsx
    filename: file.endsWith(".ts") ? new URL("./sync-worker-tsx.mjs", import.meta.url).href : syncWorkerUrl,
    // the threads stay up between batches: starting one costs more than a batch
    minThreads: threads,
    maxThreads: threads,
    // not the server's own flags: `npm start` runs under `--import tsx`, whose loader would route
    // every module the thread loads through its hooks thread (measured: most of a thread's
    // start-up); the built chunk is JavaScript, and from the sources the .mjs above registers tsx
    execArgv: [],
    // decision 0011: the WAL is checkpointed on a report thread, not inside this pool's commits
    env: { ...(process.env as Record<string, string>), [DEFER_CHECKPOINTS_ENV]: checkpointsOnReportPool() ? "1" : "" },
  });
  return pool;
}

/** The pool if a sync has started it, else null; never starts it (a thread costs ~0.4 s of CPU and ~40 MB to start). */
export function startedSyncPool(): Tinypool | null {
  return pool ?? null;
}

/**
 * Called by the sync worker module on load: a worker that runs a whole request
 * (sync-answer.server.ts) does every stage itself, and never starts a pool of its own.
 */
export function noSyncPoolOnThisThread() {
  pool = null;
}

/** For tests and shutdown: stop the threads; the next use starts them again. */
export async function closeSyncPool() {
  const p = pool;
  pool = undefined;
  await p?.destroy();
}
