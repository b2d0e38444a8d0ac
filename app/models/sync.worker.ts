// A sync worker thread (issue 16): the CPU-heavy stages of POST /api/sync, off the thread that
// serves every other request. Started by app/models/sync-pool.server.ts (tinypool); each export
// is one task, its argument and answer cross the thread boundary by structured clone.
import { computeShotRecord, shotInsertRow } from "./shot-record";
import { shotStage, validateRecords, type ShotStageInput } from "./sync-work";

export function validate(body: unknown) {
  return validateRecords(body);
}

export function shots(input: ShotStageInput) {
  return shotStage(input, { computeShotRecord, shotInsertRow });
}
