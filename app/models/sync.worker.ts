// A sync worker thread (issue 16): the CPU-heavy stages of POST /api/sync, off the thread that
// serves every other request. Started by app/models/sync-pool.server.ts (tinypool); each export
// is one task, its argument and answer cross the thread boundary by structured clone.
import { getDb } from "~/db/client.server";
import { computeShotRecord, shotInsertRow } from "./shot-record";
import { shotStage, validateRecords, type ShotStageInput } from "./sync-work";
import { answerSyncBytes } from "./sync-answer.server";
import { commitStatements, deferCheckpointsOnThisThread } from "./sync-write.server";
import { DEFER_CHECKPOINTS_ENV, noSyncPoolOnThisThread } from "./sync-pool.server";
import type { Actor } from "./actor";

noSyncPoolOnThisThread();
// decision 0011: a report thread checkpoints the WAL, so no sync's answer waits for a checkpoint
deferCheckpointsOnThisThread(process.env[DEFER_CHECKPOINTS_ENV] === "1");

// SHOTBOOK_WORKER_PROF=<dir> (set by the server bench's BENCH_SERVER_PROF): a CPU profile of this
// thread every 5 s, since `node --cpu-prof` profiles only the main thread.
const profDir = process.env.SHOTBOOK_WORKER_PROF;
if (profDir) {
  const [{ Session }, { writeFileSync }, { join }, { threadId }] = await Promise.all([import("node:inspector/promises"), import("node:fs"), import("node:path"), import("node:worker_threads")]);
  const session = new Session();
  session.connect();
  await session.post("Profiler.enable");
  await session.post("Profiler.start");
  let n = 0;
  setInterval(async () => {
    const { profile } = await session.post("Profiler.stop");
    writeFileSync(join(profDir, `sync-worker-${threadId}-${String(n++).padStart(3, "0")}.cpuprofile`), JSON.stringify(profile));
    await session.post("Profiler.start");
  }, 5000).unref();
}

/**
 * A whole POST /api/sync on this thread's own connection (issue 16): the body's bytes in, the
 * answer's bytes out; only the route's reading of the body and its sending of the answer stay
 * on the thread that serves every other request.
 */
export function ingest(task: { actor: Actor; bytes: Uint8Array; gzip: boolean }) {
  return answerSyncBytes(task.actor, task.bytes, task.gzip);
}

export function validate(body: unknown) {
  return validateRecords(body);
}

export function shots(input: ShotStageInput) {
  return shotStage(input, { computeShotRecord, shotInsertRow });
}

/**
 * The sync's write transaction on this thread's own connection (issue 16): the statements as
 * sync.server.ts built them; the answer is each statement's RETURNING rows as plain arrays.
 */
export async function write(stmts: { sql: string; args: (string | number | null)[] }[]) {
  const results = await commitStatements(getDb(), stmts);
  return results.map((r) => ({ rows: r.rows.map((row) => Array.from(row as ArrayLike<unknown>)) }));
}
