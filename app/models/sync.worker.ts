// A sync worker thread (issue 16): the CPU-heavy stages of POST /api/sync, off the thread that
// serves every other request. Started by app/models/sync-pool.server.ts (tinypool); each export
// is one task, its argument and answer cross the thread boundary by structured clone.
import { getDb } from "~/db/client.server";
import { computeShotRecord, shotInsertRow } from "./shot-record";
import { shotStage, validateRecords, type ShotStageInput } from "./sync-work";

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
  const results = await getDb().$client.batch(stmts, "write");
  return results.map((r) => ({ rows: r.rows.map((row) => Array.from(row as ArrayLike<unknown>)) }));
}
