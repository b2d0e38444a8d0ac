// The CPU-heavy stages of POST /api/sync (issue 16), pure (no database, no server state) so
// that they run either on a worker thread (app/models/sync.worker.ts, the production server) or
// on the request's own thread in slices that yield (tests, dev, the CLI). Both give the same
// answer: the code is this module's either way. sync.server.ts keeps the database reads and
// the write transaction, which stay on the thread that owns the database handle.
import { DomainError } from "~/domain";
import type { shots } from "~/db/schema";
import type { ComputedColumns, ShotOutcome } from "./shot-record";
import type { RegistryContext, SessionFacts } from "./registry-context.server";
import {
  canonicalJson,
  issuesToErrors,
  recordIdOf,
  SYNC_MAX_SESSIONS,
  SYNC_MAX_SHOTS,
  syncEnvelopeSchema,
  validateSession,
  validateShot,
  type RecordError,
  type SyncResult,
  type SyncSession,
  type SyncShot,
} from "~/contract/sync";

export type Rec<T> = { id: string; value: T | null; raw: string; errors: RecordError[] | null };
export type ShotRow = typeof shots.$inferInsert;

export type Validated = { ok: false; status: 400 | 413; body: unknown } | { ok: true; deviceId: string; sessionRecs: Rec<SyncSession>[]; shotRecs: Rec<SyncShot>[] };

/** Called between slices of records; resolves once the thread has served what waited. */
export type Pause = (() => Promise<void>) | null;

/** Records handled between two pauses on the request's thread: a few ms of work. */
export const SLICE = 50;

/**
 * An unexpected failure while handling one record (a bug, a registry row the code did not
 * foresee): that record alone is refused, in plain words, and the cause goes to the server log.
 * The tablet keeps the record and may send it again; the rest of the batch is stored.
 */
export function internalErrors(kind: "session" | "shot", id: string, e: unknown): RecordError[] {
  if (e instanceof DomainError) return [{ path: e.path, message: e.message }];
  console.error(`sync: ${kind} ${id || "(no id)"} could not be processed`, e);
  return [{ path: "", message: `this ${kind} could not be processed by the server and was not stored; the error is logged — send it again later or ask an admin` }];
}

export const conflict = (kind: string): RecordError[] => [
  { path: "id", message: `a different ${kind} with this id is already synced; synced records are never overwritten — give the changed record a new id` },
];

/** 1. The envelope, then each record on its own: zod, then the canonical raw content used for duplicate checks. */
export async function validateRecords(body: unknown, pause: Pause = null): Promise<Validated> {
  const env = syncEnvelopeSchema.safeParse(body);
  if (!env.success) {
    return {
      ok: false,
      status: 400,
      body: { error: "The body must be a JSON object { deviceId, sessions: [...], shots: [...] }; nothing was written.", errors: issuesToErrors(env.error.issues) },
    };
  }
  const { deviceId } = env.data;
  const rawSessions = env.data.sessions;
  const rawShots = env.data.shots;
  if (rawShots.length > SYNC_MAX_SHOTS || rawSessions.length > SYNC_MAX_SESSIONS) {
    return {
      ok: false,
      status: 413,
      body: { error: `At most ${SYNC_MAX_SHOTS} shots and ${SYNC_MAX_SESSIONS} sessions a request (got ${rawShots.length} shots, ${rawSessions.length} sessions); send the rest in later requests.` },
    };
  }
  const one = <T>(kind: "session" | "shot", r: unknown, check: (r: unknown) => { ok: true; value: T } | { ok: false; errors: RecordError[] }): Rec<T> => {
    try {
      const v = check(r);
      return v.ok ? { id: recordIdOf(v.value), value: v.value, raw: canonicalJson(v.value), errors: null } : { id: recordIdOf(r), value: null, raw: "", errors: v.errors };
    } catch (e) {
      return { id: recordIdOf(r), value: null, raw: "", errors: internalErrors(kind, recordIdOf(r), e) };
    }
  };
  const sessionRecs: Rec<SyncSession>[] = [];
  for (let i = 0; i < rawSessions.length; i++) {
    if (pause && i % SLICE === SLICE - 1) await pause();
    sessionRecs.push(one("session", rawSessions[i], validateSession));
  }
  const shotRecs: Rec<SyncShot>[] = [];
  for (let i = 0; i < rawShots.length; i++) {
    if (pause && i % SLICE === SLICE - 1) await pause();
    shotRecs.push(one("shot", rawShots[i], validateShot));
  }
  return { ok: true, deviceId, sessionRecs, shotRecs };
}

export type ShotStageInput = {
  shotRecs: Rec<SyncShot>[];
  /** id → stored raw of the shots of this request already in the database */
  storedShot: Map<string, string>;
  /** Session facts a shot of this batch may use: stored ones and the ones accepted now. */
  usable: Map<string, SessionFacts>;
  rejectedSessions: Set<string>;
  ctx: RegistryContext;
  meta: { deviceId: string; syncedBy: string; receivedAt: string };
};

/** The computation a shot stage uses: shots.server's (mockable in tests) or shot-record's own. */
export type ShotFns = {
  computeShotRecord: (shot: SyncShot, session: SessionFacts, ctx: RegistryContext) => ShotOutcome;
  shotInsertRow: (shot: SyncShot, raw: string, session: SessionFacts, columns: ComputedColumns, meta: ShotStageInput["meta"]) => ShotRow;
};

/** The column of an insert row holding a number SQLite cannot store (NaN, ±Infinity), if any. */
function unstorableColumn(row: Record<string, unknown>): string | null {
  for (const [k, v] of Object.entries(row)) if (typeof v === "number" && !Number.isFinite(v)) return k;
  return null;
}

/** 4. Shots: duplicates, their session, then the authoritative computation and the insert rows. */
export async function shotStage(input: ShotStageInput, fns: ShotFns, pause: Pause = null): Promise<{ results: SyncResult[]; rows: ShotRow[] }> {
  const { shotRecs, storedShot, usable, rejectedSessions, ctx, meta } = input;
  const results: SyncResult[] = [];
  const rows: ShotRow[] = [];
  const seenShots = new Map<string, string>();
  for (let i = 0; i < shotRecs.length; i++) {
    if (pause && i % SLICE === SLICE - 1) await pause();
    const rec = shotRecs[i]!;
    if (!rec.value) {
      results.push({ kind: "shot", id: rec.id, status: "rejected", errors: rec.errors! });
      continue;
    }
    const shot: SyncShot = rec.value;
    const stored = storedShot.get(shot.id) ?? seenShots.get(shot.id);
    if (stored !== undefined) {
      if (stored === rec.raw) results.push({ kind: "shot", id: shot.id, status: "duplicate" });
      else results.push({ kind: "shot", id: shot.id, status: "rejected", errors: conflict("shot") });
      continue;
    }
    const session = usable.get(shot.sessionId);
    if (!session) {
      const message = rejectedSessions.has(shot.sessionId)
        ? `its session ${shot.sessionId} was rejected in this request: fix the session and send both again`
        : `session ${shot.sessionId} is unknown: send the session first or in the same request`;
      results.push({ kind: "shot", id: shot.id, status: "rejected", errors: [{ path: "sessionId", message }] });
      continue;
    }
    let row: ShotRow;
    try {
      const out = fns.computeShotRecord(shot, session, ctx);
      if (!out.ok) {
        results.push({ kind: "shot", id: shot.id, status: "rejected", errors: out.errors });
        continue;
      }
      row = fns.shotInsertRow(shot, rec.raw, session, out.columns, meta);
      const bad = unstorableColumn(row);
      if (bad) throw new Error(`computed column ${bad} is ${String((row as Record<string, unknown>)[bad])}`);
    } catch (e) {
      results.push({ kind: "shot", id: shot.id, status: "rejected", errors: internalErrors("shot", shot.id, e) });
      continue;
    }
    seenShots.set(shot.id, rec.raw);
    rows.push(row);
    results.push({ kind: "shot", id: shot.id, status: "accepted" });
  }
  return { results, rows };
}
