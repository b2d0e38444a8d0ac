// POST /api/sync: idempotent ingest of the tablet's sessions and shots (api.md). Every record
// is validated on its own (a rejected one never blocks the others), every derived figure is
// recomputed here from the raw observation, and all accepted records of one request are
// written in one transaction. Used by the sync route, the CSV import and the demo seed.
import { getTableColumns, getTableName, inArray, type InferInsertModel } from "drizzle-orm";
import type { SQLiteTable } from "drizzle-orm/sqlite-core";
import type { ResultSet } from "@libsql/client";
import { getDb, type Db } from "~/db/client.server";
import { auditLog, checkSessions, shots, type Role } from "~/db/schema";
import { airState, DomainError, type ReportShot } from "~/domain";
import { noteAppendedShots } from "./reports.server";
import {
  computeShotRecord,
  impliedProjectsOf,
  impliedProjectsQuery,
  inIds,
  pairKey,
  registryContextOf,
  registryQueries,
  shotInsertRow,
  type SessionFacts,
} from "./shots.server";
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
} from "./sync-schemas";

export type SyncActor = { id: string; role: Role };

/**
 * One write at a time in this process. The check "is this id stored, with what raw?" and the
 * insert must not interleave with another request's, or two tablets sending the same record
 * at once would both see it missing and the second insert would fail on the primary key.
 * libSQL's local client also opens a pool of connections, and a PRAGMA busy_timeout reaches
 * only the connection that ran it; serialising our writes means no sync ever waits on
 * another sync's lock (SQLITE_BUSY), whatever connection it lands on.
 */
class Mutex {
  #tail: Promise<void> = Promise.resolve();
  async run<T>(fn: () => Promise<T>): Promise<T> {
    const prev = this.#tail;
    let release!: () => void;
    this.#tail = new Promise<void>((r) => (release = r));
    await prev;
    try {
      return await fn();
    } finally {
      release();
    }
  }
}
const writeLock = new Mutex();

/** Multi-row inserts stay far below SQLite's 32 766 bound variables (31 columns × 250 rows). */
const INSERT_CHUNK = 250;

/** sensorIds: the sensors whose shots this request stored (for the failed-verdict notice). */
type Answer = { status: number; body: unknown; headers?: Record<string, string>; sensorIds?: string[] };
type Stmt = { sql: string; args: (string | number | null)[] };

/**
 * Multi-row INSERT statements built by hand from drizzle's column map: the same SQL drizzle
 * writes, without its per-value query builder, which cost more than the insert itself here.
 */
function insertStatements<T extends SQLiteTable>(table: T, rows: InferInsertModel<T>[]): Stmt[] {
  if (!rows.length) return [];
  const columns = getTableColumns(table);
  const keys = Object.keys(rows[0]!).filter((k) => k in columns);
  const names = keys.map((k) => `"${columns[k]!.name}"`).join(", ");
  // text and real columns go as they are; booleans and JSON through drizzle's own mapping
  const plain = keys.map((k) => columns[k]!.columnType === "SQLiteText" || columns[k]!.columnType === "SQLiteReal");
  const one = `(${keys.map(() => "?").join(", ")})`;
  return chunks(rows, INSERT_CHUNK).map((part) => {
    const args: Stmt["args"] = [];
    for (const row of part) {
      const r = row as Record<string, unknown>;
      for (let i = 0; i < keys.length; i++) {
        const v = r[keys[i]!];
        args.push(v == null ? null : plain[i] ? (v as string | number) : (columns[keys[i]!]!.mapToDriverValue(v) as string | number));
      }
    }
    return { sql: `INSERT INTO "${getTableName(table)}" (${names}) VALUES ${part.map(() => one).join(", ")}`, args };
  });
}

/**
 * The report cache's copy of the shots just written, so the verdict notice and the next report
 * need not read them back. A multi-row INSERT under the write lock gives its rows consecutive
 * rowids ending at lastInsertRowid; the cache uses the rows only once the database confirms
 * the count of the sensor's new rows.
 */
function handOver(db: Db, rows: (typeof shots.$inferInsert)[], results: ResultSet[], startedAtOf: Map<string, string>) {
  const bySensor = new Map<string, { rowid: number; shot: ReportShot }[]>();
  let at = 0;
  for (const rs of results) {
    const n = rs.rowsAffected;
    const last = rs.lastInsertRowid === undefined ? NaN : Number(rs.lastInsertRowid);
    if (!Number.isSafeInteger(last) || n <= 0 || at + n > rows.length) return; // not what was sent: read them back
    for (let i = 0; i < n; i++) {
      const r = rows[at + i]!;
      const startedAt = startedAtOf.get(r.sessionId);
      if (startedAt === undefined) return;
      const list = bySensor.get(r.sensorId) ?? [];
      list.push({
        rowid: last - n + 1 + i,
        shot: {
          id: r.id,
          takenAt: r.takenAt,
          sessionId: r.sessionId,
          sessionStartedAt: startedAt,
          // as SQLite gives them back: a REAL −0 is stored as the integer 0
          referenceM: r.referenceM + 0,
          rangeM: r.rangeM + 0,
          errorMm: r.errorMm + 0,
          repeatabilityMm: r.repeatabilityMm == null ? null : r.repeatabilityMm + 0,
          reflectancePct: r.reflectancePct + 0,
          illuminanceKlux: r.illuminanceKlux == null ? null : r.illuminanceKlux + 0,
          retro: !!r.retro,
          excluded: !!r.excluded,
          wrap: !!r.wrap,
          airDefaulted: !!r.airDefaulted,
          referenceUncertaintyMm: r.referenceUncertaintyMm == null ? null : r.referenceUncertaintyMm + 0,
        },
      });
      bySensor.set(r.sensorId, list);
    }
    at += n;
  }
  if (at === rows.length) noteAppendedShots(db, bySensor);
}

const conflict = (kind: string): RecordError[] => [
  { path: "id", message: `a different ${kind} with this id is already synced; synced records are never overwritten — give the changed record a new id` },
];

function chunks<T>(xs: T[], n: number): T[][] {
  const out: T[][] = [];
  for (let i = 0; i < xs.length; i += n) out.push(xs.slice(i, i + n));
  return out;
}

export async function ingestSync(actor: SyncActor, body: unknown, db: Db = getDb()): Promise<Answer> {
  const env = syncEnvelopeSchema.safeParse(body);
  if (!env.success) {
    return {
      status: 400,
      body: { error: "The body must be a JSON object { deviceId, sessions: [...], shots: [...] }; nothing was written.", errors: issuesToErrors(env.error.issues) },
    };
  }
  const { deviceId } = env.data;
  const rawSessions = env.data.sessions;
  const rawShots = env.data.shots;
  if (rawShots.length > SYNC_MAX_SHOTS || rawSessions.length > SYNC_MAX_SESSIONS) {
    return {
      status: 413,
      body: { error: `At most ${SYNC_MAX_SHOTS} shots and ${SYNC_MAX_SESSIONS} sessions a request (got ${rawShots.length} shots, ${rawSessions.length} sessions); send the rest in later requests.` },
    };
  }

  // 1. Each record on its own: zod, then the canonical raw content used for duplicate checks.
  const sessionRecs = rawSessions.map((r) => {
    const v = validateSession(r);
    return v.ok ? { id: v.value.id, value: v.value, raw: canonicalJson(v.value), errors: null } : { id: recordIdOf(r), value: null, raw: "", errors: v.errors };
  });
  const shotRecs = rawShots.map((r) => {
    const v = validateShot(r);
    return v.ok ? { id: v.value.id, value: v.value, raw: canonicalJson(v.value), errors: null } : { id: recordIdOf(r), value: null, raw: "", errors: v.errors };
  });

  return writeLock.run(async () => {
    // 2. What is stored already, and the registry rows the computation needs: one batch (one
    //    read transaction, one round trip). The registry of sessions stored earlier comes by
    //    their ids; the projects of the new sessions' sensors come along for implied projects.
    const batchSessionIds = sessionRecs.flatMap((s) => (s.value ? [s.value.id] : []));
    const shotSessionIds = shotRecs.flatMap((s) => (s.value ? [s.value.sessionId] : []));
    const sessionIds = [...new Set([...batchSessionIds, ...shotSessionIds])];
    const shotIds = [...new Set(shotRecs.flatMap((s) => (s.value ? [s.value.id] : [])))];
    const incoming = sessionRecs.flatMap((s) => (s.value ? [s.value] : []));
    const impliedNeed = incoming.filter((s) => !s.projectId).map((s) => ({ sensorId: s.sensorId, siteId: s.siteId }));
    const [storedSessions, storedShots, impliedRows, ...registry] = await db.batch([
      db
        .select({
          id: checkSessions.id,
          raw: checkSessions.raw,
          sensorId: checkSessions.sensorId,
          siteId: checkSessions.siteId,
          projectId: checkSessions.projectId,
          startedAt: checkSessions.startedAt,
          airTempC: checkSessions.airTempC,
          pressureHpa: checkSessions.pressureHpa,
          humidityPct: checkSessions.humidityPct,
        })
        .from(checkSessions)
        .where(inIds(checkSessions.id, sessionIds)),
      db.select({ id: shots.id, raw: shots.raw }).from(shots).where(inIds(shots.id, shotIds)),
      impliedProjectsQuery(impliedNeed, db),
      ...registryQueries(
        {
          sensorIds: incoming.map((s) => s.sensorId),
          siteIds: incoming.map((s) => s.siteId),
          tapeIds: shotRecs.flatMap((s) => (s.value?.reference.method === "tape" ? [s.value.reference.tape.tapeId] : [])),
          projectIds: incoming.flatMap((s) => (s.projectId ? [s.projectId] : [])),
          sessionIds,
          projectsOfSensorIds: impliedNeed.map((s) => s.sensorId),
        },
        db,
      ),
    ]);
    const storedSession = new Map(storedSessions.map((s) => [s.id, s]));
    const startedAtOf = new Map(storedSessions.map((s) => [s.id, s.startedAt]));
    const storedShot = new Map(storedShots.map((s) => [s.id, s.raw]));
    const implied = impliedProjectsOf(impliedRows);
    const ctx = registryContextOf(registry);

    const receivedAt = new Date().toISOString();
    const results: SyncResult[] = [];
    const sessionRows: (typeof checkSessions.$inferInsert)[] = [];
    const shotRows: (typeof shots.$inferInsert)[] = [];

    // 3. Sessions before their shots.
    /** Session facts a shot of this batch may use: stored ones and the ones accepted now. */
    const usable = new Map<string, SessionFacts>();
    for (const s of storedSessions) {
      usable.set(s.id, {
        id: s.id,
        sensorId: s.sensorId,
        siteId: s.siteId,
        projectId: s.projectId,
        air: { airTempC: s.airTempC, pressureHpa: s.pressureHpa, humidityPct: s.humidityPct },
      });
    }
    const rejectedSessions = new Set<string>();
    const seenSessions = new Map<string, string>(); // id → raw, within this batch
    for (const rec of sessionRecs) {
      const reject = (errors: RecordError[]) => {
        if (rec.id) rejectedSessions.add(rec.id);
        results.push({ kind: "session", id: rec.id, status: "rejected", errors });
      };
      if (!rec.value) {
        reject(rec.errors!);
        continue;
      }
      const s: SyncSession = rec.value;
      const stored = storedSession.get(s.id)?.raw ?? seenSessions.get(s.id);
      if (stored !== undefined) {
        if (stored === rec.raw) results.push({ kind: "session", id: s.id, status: "duplicate" });
        else results.push({ kind: "session", id: s.id, status: "rejected", errors: conflict("session") });
        // a conflicting copy never disqualifies the stored session's shots
        continue;
      }
      const errors: RecordError[] = [];
      const sensor = ctx.sensors.get(s.sensorId);
      if (!sensor) errors.push({ path: "sensorId", message: `sensor ${s.sensorId} is not in the registry` });
      if (!ctx.sites.has(s.siteId)) errors.push({ path: "siteId", message: `site ${s.siteId} is not in the registry` });
      if (s.projectId && !ctx.rules.has(s.projectId)) errors.push({ path: "projectId", message: `project ${s.projectId} is not in the registry` });
      const air = { airTempC: s.airTempC, pressureHpa: s.pressureHpa, humidityPct: s.humidityPct };
      if (sensor) {
        try {
          airState(air, sensor.wavelengthNm);
        } catch (e) {
          if (!(e instanceof DomainError)) throw e;
          errors.push({ path: e.path, message: e.message });
        }
      }
      if (errors.length) {
        reject(errors);
        continue;
      }
      const projectId = s.projectId || implied.get(pairKey(s.sensorId, s.siteId)) || null;
      seenSessions.set(s.id, rec.raw);
      startedAtOf.set(s.id, s.startedAt);
      usable.set(s.id, { id: s.id, sensorId: s.sensorId, siteId: s.siteId, projectId, air });
      sessionRows.push({
        id: s.id,
        sensorId: s.sensorId,
        siteId: s.siteId,
        projectId,
        startedAt: s.startedAt,
        airTempC: s.airTempC ?? null,
        pressureHpa: s.pressureHpa ?? null,
        humidityPct: s.humidityPct ?? null,
        note: s.note || null,
        raw: rec.raw,
        deviceId,
        syncedBy: actor.id,
        receivedAt,
      });
      results.push({ kind: "session", id: s.id, status: "accepted" });
    }

    // 4. Shots: duplicates, their session, then the authoritative computation.
    const seenShots = new Map<string, string>();
    for (const rec of shotRecs) {
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
      const out = computeShotRecord(shot, session, ctx);
      if (!out.ok) {
        results.push({ kind: "shot", id: shot.id, status: "rejected", errors: out.errors });
        continue;
      }
      seenShots.set(shot.id, rec.raw);
      shotRows.push(shotInsertRow(shot, rec.raw, session, out.columns, { deviceId, syncedBy: actor.id, receivedAt }));
      results.push({ kind: "shot", id: shot.id, status: "accepted" });
    }

    // 5. One write transaction for the whole request (one batch; the local client runs it
    //    synchronously between BEGIN IMMEDIATE and COMMIT, so it cannot half-happen).
    const counts = { accepted: 0, duplicate: 0, rejected: 0 };
    for (const r of results) counts[r.status]++;
    if (sessionRows.length || shotRows.length || counts.rejected) {
      const audit = db
        .insert(auditLog)
        .values({
          actorUserId: actor.id,
          action: "sync",
          entity: "device",
          entityId: deviceId,
          detail: { sessions: sessionRows.length, shots: shotRows.length, ...counts },
        })
        .toSQL();
      const sessionStmts = insertStatements(checkSessions, sessionRows);
      const shotStmts = insertStatements(shots, shotRows);
      const stmts: Stmt[] = [...sessionStmts, ...shotStmts, { sql: audit.sql, args: audit.params as Stmt["args"] }];
      try {
        const done = await db.$client.batch(stmts, "write");
        handOver(db, shotRows, done.slice(sessionStmts.length, sessionStmts.length + shotStmts.length), startedAtOf);
      } catch (e) {
        const code = (e as { code?: string }).code ?? "";
        // Another process wrote one of these ids meanwhile: nothing of ours was written.
        if (code.startsWith("SQLITE_CONSTRAINT") || code.startsWith("SQLITE_BUSY")) {
          return { status: 503, body: { error: "Another sync wrote at the same moment; nothing was written — send the batch again." }, headers: { "Retry-After": "1" } };
        }
        throw e;
      }
    }
    return { status: 200, body: { results }, sensorIds: [...new Set(shotRows.map((r) => r.sensorId))] };
  });
}
