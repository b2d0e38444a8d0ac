// The report worker pool (issue 16): a sensor report's heavy read (report-sums.server.ts) runs on
// a worker thread with its own connection to the same database file. The local libSQL client
// runs every query synchronously on the thread that calls it; the read of a report over 100,000
// shots took 0.3–0.5 s of the request thread, and while tablets synced (each batch a new
// fingerprint, so a new read) it held /healthz and every other request for seconds. In WAL
// mode a reader never waits for the writer, so the worker's connection neither blocks nor is
// blocked by the request thread's writes.
//
// REPORT_WORKERS = number of threads; 0 reads on the request's thread. Default: as SYNC_WORKERS
// (one less than the cores, at least 1) under NODE_ENV=production, 0 otherwise (tests, dev, the
// CLI), and only for a local database file (a libSQL server is read over the network already).
import { existsSync } from "node:fs";
import { availableParallelism } from "node:os";
import { fileURLToPath } from "node:url";
import Tinypool from "tinypool";
import { getDb, isSharedFile, type Db } from "~/db/client.server";
import { getEnv } from "~/env.server";
import { buildReportJson, type BuildInput, type BuiltJson } from "./report-build.server";
import { reportWorkerUrl } from "./report-worker-url.server";

let pool: Tinypool | null | undefined;
/** Settles when every thread has run its warm-up (or failed to: then reports are still read, on the threads or here). */
let warmed: Promise<void> = Promise.resolve();

export function reportWorkerCount(env: NodeJS.ProcessEnv = process.env): number {
  const v = env.REPORT_WORKERS;
  if (v !== undefined && v !== "") {
    const n = Number(v);
    if (!Number.isInteger(n) || n < 0 || n > 64) throw new Error(`REPORT_WORKERS must be a whole number from 0 to 64 (got "${v}")`);
    return n;
  }
  return env.NODE_ENV === "production" ? Math.max(1, Math.min(4, availableParallelism() - 1)) : 0;
}

/** The pool, started on first use; null when reports are read on the request's thread. */
export function reportPool(): Tinypool | null {
  if (pool !== undefined) return pool;
  const threads = reportWorkerCount();
  if (!threads || !isSharedFile(getEnv().DATABASE_URL)) return (pool = null);
  const file = fileURLToPath(reportWorkerUrl);
  if (!existsSync(file)) {
    // a build without its worker chunk must still answer: slower, never refused
    console.error(`report: the worker module ${file} is missing; reading reports on the request thread`);
    return (pool = null);
  }
  pool = new Tinypool({
    filename: file.endsWith(".ts") ? new URL("./report-worker-tsx.mjs", import.meta.url).href : reportWorkerUrl,
    minThreads: threads,
    maxThreads: threads,
    // not the server's own flags: `npm start` runs under `--import tsx`, whose loader would route
    // every module the thread loads through its hooks thread (measured: most of a thread's
    // start-up); the built chunk is JavaScript, and from the sources the .mjs above registers tsx
    execArgv: [],
  });
  // decision 0011: this pool checkpoints the WAL (the sync workers learn it from checkpointsOnReportPool when they start)
  checkpointTimer = setInterval(checkpointSoon, CHECKPOINT_EVERY_MS);
  checkpointTimer.unref();
  // the first report after a start should not also pay for the thread's modules, connection and
  // first statements; the server entry waits for this before it listens (startReportPool)
  const p = pool;
  warmed = Promise.all(Array.from({ length: threads }, () => p.run(null, { name: "warm" }).catch((e) => console.error("report: a worker did not start", e)))).then(() => undefined);
  return pool;
}

/** The report without rows as JSON bytes (report-build.server.ts): on the pool for the server's own database, else here. */
export async function buildReportJsonOffThread(db: Db, input: BuildInput): Promise<BuiltJson> {
  const p = db === getDb() ? reportPool() : null;
  if (!p) return buildReportJson(db, input);
  return (await p.run(input, { name: "reportJson" })) as BuiltJson;
}

/** Whether this process's report threads checkpoint the WAL (decision 0011): then the sync workers' commits leave it to them. */
export function checkpointsOnReportPool(): boolean {
  return !!reportPool();
}

/** Between two checkpoints at least this long: a tablet's outbox arriving batch after batch is checkpointed every few batches. */
export const CHECKPOINT_GAP_MS = 200;
/** And at least this often, for the writes of the request thread (forms, sign-ins, audit; its connections keep SQLite's own checkpoint too). */
export const CHECKPOINT_EVERY_MS = 5_000;
let checkpointTimer: ReturnType<typeof setInterval> | undefined;
let checkpointing: Promise<void> | null = null;
let checkpointAgain = false;
let lastCheckpointAt = 0;
/** What the checkpoints of this process did so far (tests, the bench): how many ran, and the WAL as the last one left it. */
const checkpoints = { runs: 0, failed: 0, last: null as null | { busy: number; walPages: number; checkpointed: number } };
export const checkpointStats = () => ({ ...checkpoints });
/** Settles when no checkpoint is running or queued. */
export const checkpointsSettled = async () => {
  while (checkpointing) await checkpointing;
};

/**
 * A checkpoint of the WAL on a report thread, soon (decision 0011): called after each sync the
 * sync workers wrote. One runs at a time, at most one more is queued behind it, and two are at
 * least CHECKPOINT_GAP_MS apart; a failure is logged (the next one copies what this one left).
 */
export function checkpointSoon(): void {
  const p = pool;
  if (!p) return;
  if (checkpointing) {
    checkpointAgain = true;
    return;
  }
  checkpointing = (async () => {
    do {
      checkpointAgain = false;
      const wait = lastCheckpointAt + CHECKPOINT_GAP_MS - Date.now();
      if (wait > 0) await new Promise((r) => setTimeout(r, wait));
      if (pool !== p) break;
      try {
        checkpoints.last = (await p.run(null, { name: "checkpoint" })) as typeof checkpoints.last;
        checkpoints.runs++;
      } catch (e) {
        checkpoints.failed++;
        console.error("report: a WAL checkpoint failed", e);
      }
      lastCheckpointAt = Date.now();
    } while (checkpointAgain);
  })().finally(() => {
    checkpointing = null;
  });
}

/** For tests and shutdown: stop the threads; the next use starts them again. */
export async function closeReportPool() {
  const p = pool;
  pool = undefined;
  clearInterval(checkpointTimer);
  checkpointTimer = undefined;
  await checkpointing;
  await p?.destroy();
}

/**
 * Called by the server entry at start (not on import: command-line tools start no threads).
 * Settles when the threads are warm: app/cli/serve.ts listens only then (at most 15 s later),
 * so the first report after a restart neither waits for a thread's start nor shares the CPU
 * with it (measured at 100,000 shots: 400 of the first view's 680 ms of server CPU were the
 * thread starting meanwhile).
 */
export function startReportPool(): Promise<void> {
  try {
    reportPool();
  } catch (e) {
    console.error("report: the report worker pool did not start; reading reports on the request thread", e);
  }
  return warmed;
}
