// The outbox: every session, shot and photo is written to IndexedDB before the screen says
// "saved", and stays there (surviving reloads, tab kills and days offline) until the server
// has answered for it. Validation runs first, with the paths the server would use.
import { fieldDb, queueStamp } from "./db";
import { interruptSync } from "./sync-interrupt";
import { previewShot, type PreviewContext } from "./preview";
import type { FieldError, LocalPhoto, LocalSession, LocalShot, SyncSessionRecord, SyncShotRecord } from "./types";
import { checkSessionRecord, checkShotRecord } from "./validate";

export class OutboxError extends Error {
  errors: FieldError[];
  constructor(errors: FieldError[]) {
    super(errors.map((e) => `${e.path}: ${e.message}`).join("; "));
    this.name = "OutboxError";
    this.errors = errors;
  }
}

/** Drops undefined keys so the stored record is exactly what will be sent (and compared for duplicates). */
function clean<T extends object>(o: T): T {
  return JSON.parse(JSON.stringify(o)) as T;
}

export async function startSession(
  record: Omit<SyncSessionRecord, "id" | "startedAt"> & Partial<Pick<SyncSessionRecord, "id" | "startedAt">>,
  local: { sky?: string; illuminanceKlux?: number } = {},
): Promise<LocalSession> {
  const full = clean({ ...record, id: record.id ?? crypto.randomUUID(), startedAt: record.startedAt ?? localIso() });
  const errors = checkSessionRecord(full);
  if (errors.length) throw new OutboxError(errors);
  const row: LocalSession = { id: full.id, record: full, state: "queued", errors: [], queuedAt: queueStamp(), ...clean(local) };
  await fieldDb().sessions.put(row);
  return row;
}

async function previewContextFor(sessionId: string): Promise<{ session: LocalSession | undefined; ctx: PreviewContext }> {
  const db = fieldDb();
  const session = await db.sessions.get(sessionId);
  const [sensor, site, tapes, project] = await Promise.all([
    session ? db.sensors.get(session.record.sensorId) : undefined,
    session ? db.sites.get(session.record.siteId) : undefined,
    db.tapes.toArray(),
    session?.record.projectId ? db.projects.get(session.record.projectId) : undefined,
  ]);
  return { session, ctx: { sensor, site, tapes, project } };
}

export type ShotDraft = Omit<SyncShotRecord, "id" | "takenAt"> & Partial<Pick<SyncShotRecord, "id" | "takenAt">>;
export type PhotoDraft = { blob: Blob; name?: string };

/**
 * Queues one shot (and its photo) in a single transaction. Returns once IndexedDB has
 * committed; only then may the screen say "saved". `context` skips the reference lookups
 * when the caller already holds them (the log-shot screen does).
 */
export async function saveShot(draft: ShotDraft, photo?: PhotoDraft | null, context?: PreviewContext): Promise<LocalShot> {
  const db = fieldDb();
  const record = clean({ ...draft, id: draft.id ?? crypto.randomUUID(), takenAt: draft.takenAt ?? localIso() });
  const errors = checkShotRecord(record);
  if (errors.length) throw new OutboxError(errors);
  const ctx = context ?? (await previewContextFor(record.sessionId)).ctx;
  const photoRow: LocalPhoto | null = photo
    ? {
        id: crypto.randomUUID(),
        shotId: record.id,
        blob: photo.blob,
        name: photo.name ?? "photo.jpg",
        type: photo.blob.type || "application/octet-stream",
        bytes: photo.blob.size,
        state: "queued",
        errors: [],
        queuedAt: queueStamp(),
      }
    : null;
  // One transaction: the session check, the instant check and the writes commit together.
  return db.transaction("rw", db.sessions, db.shots, db.photos, async () => {
    const [session, existing] = await Promise.all([db.sessions.get(record.sessionId), db.shots.get(record.id)]);
    if (!session) throw new OutboxError([{ path: "sessionId", message: "Start a session first: this shot has none on this tablet" }]);
    if (existing && existing.state === "synced") {
      throw new OutboxError([{ path: "", message: "This shot has reached the server already; synced shots are never changed." }]);
    }
    const result = previewShot(session.record, record, ctx);
    if (!result.ok && result.path) throw new OutboxError([{ path: result.path, message: result.message }]);
    const row: LocalShot = {
      id: record.id,
      sessionId: record.sessionId,
      record,
      state: "queued",
      errors: [],
      queuedAt: existing?.queuedAt ?? queueStamp(),
      preview: result.ok ? result.preview : null,
      ...(result.ok ? {} : { previewError: result.message }),
    };
    await db.shots.put(row);
    if (photoRow) await db.photos.put(photoRow);
    return row;
  });
}

/** A shot the server refused only because its session was refused ("sessionId") goes again with it. */
function requeueSessionShots(sessionId: string) {
  return fieldDb()
    .shots.where("[sessionId+state]")
    .equals([sessionId, "rejected"])
    .modify((s) => {
      if (s.errors.length && s.errors.every((e) => e.path === "sessionId")) {
        s.state = "queued";
        s.errors = [];
      }
    });
}

/** Puts a rejected session back in the queue (e.g. after an admin added its sensor). */
export async function resendSession(id: string) {
  const db = fieldDb();
  await db.transaction("rw", db.sessions, db.shots, async () => {
    const s = await db.sessions.get(id);
    if (s?.state !== "rejected") return;
    await db.sessions.update(id, { state: "queued", errors: [] });
    await requeueSessionShots(id);
  });
}

/**
 * Fixes a queued or refused session under the same client id (its shots reference it): checks
 * the record, writes it and queues it again, re-runs the instant check of its unsent shots
 * against the new sensor/site/air, and re-queues the shots refused only for the session's sake.
 * Returns once IndexedDB has committed; only then may the screen say "saved".
 */
export async function updateSession(id: string, changes: Omit<SyncSessionRecord, "id">): Promise<LocalSession> {
  const db = fieldDb();
  const record = clean({ ...changes, id });
  const errors = checkSessionRecord(record);
  if (errors.length) throw new OutboxError(errors);
  const [sensor, site, tapes, project] = await Promise.all([
    db.sensors.get(record.sensorId),
    db.sites.get(record.siteId),
    db.tapes.toArray(),
    record.projectId ? db.projects.get(record.projectId) : undefined,
  ]);
  const ctx: PreviewContext = { sensor, site, tapes, project };
  return db.transaction("rw", db.sessions, db.shots, async () => {
    const s = await db.sessions.get(id);
    if (!s) throw new OutboxError([{ path: "", message: "No such session on this tablet" }]);
    if (s.state === "synced") {
      throw new OutboxError([{ path: "", message: "This session has reached the server already; synced sessions are never changed." }]);
    }
    // a fixed session is a new try: it goes in the batches again, no longer set aside as stuck
    const { stuck: _stuck, ...kept } = s;
    const row: LocalSession = { ...kept, record, state: "queued", errors: [] };
    await db.sessions.put(row);
    const shots = await db.shots.where("sessionId").equals(id).toArray();
    for (const shot of shots) {
      if (shot.state === "synced") continue;
      const result = previewShot(record, shot.record, ctx);
      const { previewError: _old, ...rest } = shot;
      await db.shots.put(result.ok ? { ...rest, preview: result.preview } : { ...rest, preview: null, previewError: result.message });
    }
    await requeueSessionShots(id);
    return row;
  });
}

export async function resendPhoto(id: string) {
  await fieldDb()
    .photos.where("id")
    .equals(id)
    .modify((p) => {
      if (p.state === "rejected") {
        p.state = "queued";
        p.errors = [];
      }
    });
}

/** A rejected or queued shot may be thrown away by the crew; synced ones stay on the server. */
export async function discardShot(id: string) {
  const db = fieldDb();
  await db.transaction("rw", db.shots, db.photos, async () => {
    const s = await db.shots.get(id);
    if (!s || s.state === "synced") return;
    await db.shots.delete(id);
    await db.photos.where("shotId").equals(id).delete();
  });
}

export type DiscardOutcome = { discarded: true; shots: number } | { discarded: false; reason: string };

/**
 * Throws away a session that has not reached the server, with its shots and photos (a session
 * started with the wrong sensor, say). Waits for a running send to finish first (the same Web
 * Lock as sync.ts), so a batch in flight cannot carry the session out after the crew threw it
 * away; then checks again that nothing of it is on the server.
 */
export async function discardSession(id: string): Promise<DiscardOutcome> {
  const db = fieldDb();
  const run = () =>
    db.transaction("rw", db.sessions, db.shots, db.photos, async (): Promise<DiscardOutcome> => {
      const s = await db.sessions.get(id);
      if (!s) return { discarded: false, reason: "No such session on this tablet." };
      const shots = await db.shots.where("sessionId").equals(id).toArray();
      if (s.state === "synced" || shots.some((x) => x.state === "synced")) {
        return { discarded: false, reason: "This session has reached the server: it cannot be thrown away here. A QA lead can exclude its shots with a reason." };
      }
      if (shots.length)
        await db.photos
          .where("shotId")
          .anyOf(shots.map((x) => x.id))
          .delete();
      await db.shots.where("sessionId").equals(id).delete();
      await db.sessions.delete(id);
      return { discarded: true, shots: shots.length };
    });
  const locks = (globalThis.navigator as Navigator | undefined)?.locks;
  // This page's own run may be sleeping out a back-off with the lock held: end it now rather
  // than keep the crew waiting; the outbox starts a fresh run afterwards.
  interruptSync();
  return locks?.request ? locks.request("shotbook-sync", run) : run();
}

export type OutboxCounts = { sessions: number; shots: number; photos: number; rejected: number; total: number };

export async function outboxCounts(): Promise<OutboxCounts> {
  const db = fieldDb();
  // One read transaction, not six: the status line re-reads this after every save.
  const [sq, sr, hq, hr, pq, pr] = await db.transaction("r", db.sessions, db.shots, db.photos, () =>
    Promise.all([
      db.sessions.where("state").equals("queued").count(),
      db.sessions.where("state").equals("rejected").count(),
      db.shots.where("state").equals("queued").count(),
      db.shots.where("state").equals("rejected").count(),
      db.photos.where("state").equals("queued").count(),
      db.photos.where("state").equals("rejected").count(),
    ]),
  );
  return { sessions: sq + sr, shots: hq + hr, photos: pq + pr, rejected: sr + hr + pr, total: sq + sr + hq + hr + pq + pr };
}

/** ISO 8601 with the tablet's own offset, as api.md asks ("2026-05-04T08:10:00+02:00"). */
export function localIso(d = new Date()): string {
  const pad = (n: number, w = 2) => String(Math.trunc(Math.abs(n))).padStart(w, "0");
  const off = -d.getTimezoneOffset();
  const sign = off >= 0 ? "+" : "-";
  return (
    `${d.getFullYear()}-${pad(d.getMonth() + 1)}-${pad(d.getDate())}T${pad(d.getHours())}:${pad(d.getMinutes())}:${pad(d.getSeconds())}.${pad(d.getMilliseconds(), 3)}` +
    `${sign}${pad(off / 60)}:${pad(off % 60)}`
  );
}
