// POST /api/sync: idempotent ingest of the tablet's sessions and shots (api.md). Every record
// is validated on its own (a rejected one never blocks the others), every derived figure is
// recomputed here from the raw observation, and all accepted records of one request are
// written in one transaction. Used by the sync route, the CSV import and the demo seed.
import { getDb, type Db } from "~/db/client.server";
import { isTransientDbError, retryTransient } from "~/db/transient.server";
import { auditLog, checkSessions, projectEdms, projectTapes, shots } from "~/db/schema";
import { eq } from "drizzle-orm";
import { airState, DomainError } from "~/domain";
import { computeShotRecord, shotInsertRow } from "./shot-record";
import { holdingProjectsQuery, inIds, pairKey, registryContextOf, registryQueries, type SessionFacts } from "./registry-context.server";
import { type RecordError, type SyncResult, type SyncSession, type SyncShot } from "~/contract/sync";
import { syncPool } from "./sync-pool.server";
import { conflict, internalErrors, shotStage, validateRecords, type Rec, type ShotRow, type ShotStageInput, type Validated } from "./sync-work";

import type { Actor } from "./actor";
import { insertStatements, stmtOf, reclassify, writeBatch, writeOneAtATime, writtenIds, yieldToLoop, type Stmt, type WriteResult, HIDDEN_RAW } from "./sync-write.server";
import { inScope, scopeOf, type Scope } from "./scope.server";

/**
 * Idempotency lives in the database, not in this process: several app instances (and a libSQL
 * server's replicas forwarding writes to its primary) may take the same records at once. Each
 * insert skips ids already stored (ON CONFLICT(id) DO NOTHING) and returns the ids it wrote;
 * a record it skipped was stored by someone else between our read and our write, and is
 * classified again from the stored raw (duplicate when equal, a conflict otherwise). The whole
 * request is repeatable, so a transient database error (busy, proxy, network) is tried again
 * here and otherwise answered 503 with Retry-After by the route.
 */

/** sensorIds: the sensors whose shots this request stored (for the failed-verdict notice). */
type Answer = { status: number; body: unknown; headers?: Record<string, string>; sensorIds?: string[] };

type Holder = { projectId: string; name: string; retiredAt: string | null };

type ShotRec = Rec<SyncShot>;
const tapeIdOf = (s: SyncShot) => (s.reference.method === "tape" ? s.reference.tape.tapeId : undefined);
const edmIdOf = (s: SyncShot) => (s.reference.method === "edm" ? s.reference.edmId : undefined);
const tapeIdsOf = (recs: ShotRec[]) => [...new Set(recs.flatMap((r) => (r.value && tapeIdOf(r.value)) || []))];
const edmIdsOf = (recs: ShotRec[]) => [...new Set(recs.flatMap((r) => (r.value && edmIdOf(r.value)) || []))];

/** issue 14: the errors of a shot naming a tape or reference EDM that its session's project does not list. */
function unlistedReferenceErrors(shot: SyncShot, projectId: string, linked: Set<string>): RecordError[] {
  const tapeId = tapeIdOf(shot);
  if (tapeId && !linked.has(`tape|${projectId}|${tapeId}`)) {
    return [
      {
        path: "reference.tape.tapeId",
        message: `tape ${tapeId} is not one of the tapes of this session's project: choose a tape the project uses, or ask an admin to add this tape to the project`,
      },
    ];
  }
  const edmId = edmIdOf(shot);
  if (edmId && !linked.has(`edm|${projectId}|${edmId}`)) {
    return [
      {
        path: "reference.edmId",
        message: `reference EDM ${edmId} is not one of the reference EDMs of this session's project: choose one the project uses, or ask an admin to add it to the project`,
      },
    ];
  }
  return [];
}

/**
 * issue 14 (api.md v1.1): the project a new session belongs to. A given projectId must be a
 * project of the syncing user that lists both the sensor and the site; without one, it is
 * implied when the sensor and site share exactly one of the user's live projects. Otherwise
 * the session is refused on path projectId, saying what to do.
 */
function sessionProject(s: SyncSession, holders: Holder[], known: boolean, scope: Scope): { projectId: string } | { error: RecordError } {
  const mine = holders.filter((h) => inScope(scope, h.projectId));
  if (s.projectId) {
    const id = s.projectId;
    // an unknown project and one the user is not a member of answer alike
    if (!known || !inScope(scope, id)) {
      return {
        error: { path: "projectId", message: scope.all ? `project ${id} is not in the registry` : `project ${id} is not one of your projects (or does not exist): choose one of your projects` },
      };
    }
    if (!holders.some((h) => h.projectId === id)) {
      return { error: { path: "projectId", message: `project ${id} does not list both this session's sensor and its site: choose the project that uses them, or ask an admin to add them to it` } };
    }
    return { projectId: id };
  }
  const live = mine.filter((h) => !h.retiredAt);
  if (live.length === 1) return { projectId: live[0]!.projectId };
  if (live.length === 0) {
    return {
      error: {
        path: "projectId",
        message: scope.all
          ? "no project lists both this session's sensor and its site: add them to a project (admin), then send the session again"
          : "none of your projects lists both this session's sensor and its site, so the session cannot be stored: check the sensor and site chosen, or ask an admin to add you to their project",
      },
    };
  }
  return {
    error: {
      path: "projectId",
      message: `the sensor and site are used by several of your projects (${live
        .map((h) => h.name)
        .sort()
        .join(", ")}): choose the project of this session`,
    },
  };
}

export async function ingestSync(actor: Actor, body: unknown, db: Db = getDb()): Promise<Answer> {
  // 1. The envelope, then each record on its own (zod, canonical raw): off this thread.
  const pool = syncPool();
  const v: Validated = pool ? await pool.run(body, { name: "validate" }) : await validateRecords(body, yieldToLoop);
  if (!v.ok) return { status: v.status, body: v.body };
  const { deviceId, sessionRecs, shotRecs } = v;

  return retryTransient(async () => {
    // issue 14: the syncing user's projects (admins: all)
    const scope = await scopeOf(actor, db);
    // 2. What is stored already, and the registry rows the computation needs: one batch (one
    //    read transaction, one round trip). The registry of sessions stored earlier comes by
    //    their ids; the projects of the new sessions' sensors come along for implied projects.
    const batchSessionIds = sessionRecs.flatMap((s) => (s.value ? [s.value.id] : []));
    const shotSessionIds = shotRecs.flatMap((s) => (s.value ? [s.value.sessionId] : []));
    const sessionIds = [...new Set([...batchSessionIds, ...shotSessionIds])];
    const shotIds = [...new Set(shotRecs.flatMap((s) => (s.value ? [s.value.id] : [])))];
    const incoming = sessionRecs.flatMap((s) => (s.value ? [s.value] : []));
    const impliedNeed = incoming.filter((s) => !s.projectId).map((s) => ({ sensorId: s.sensorId, siteId: s.siteId }));
    const [storedSessions, storedShots, holderRows, tapeLinks, edmLinks, ...registry] = await db.batch([
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
      db.select({ id: shots.id, raw: shots.raw, projectId: checkSessions.projectId }).from(shots).innerJoin(checkSessions, eq(checkSessions.id, shots.sessionId)).where(inIds(shots.id, shotIds)),
      holdingProjectsQuery(incoming, db),
      // issue 14: the projects that list the tapes and reference EDMs these shots name
      db
        .select({ projectId: projectTapes.projectId, id: projectTapes.tapeId })
        .from(projectTapes)
        .where(inIds(projectTapes.tapeId, tapeIdsOf(shotRecs))),
      db
        .select({ projectId: projectEdms.projectId, id: projectEdms.edmId })
        .from(projectEdms)
        .where(inIds(projectEdms.edmId, edmIdsOf(shotRecs))),
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
    // issue 14: a shot id taken in a project the user cannot see answers as a conflict in the
    // words of any conflict, never "duplicate" (which would confirm its content) nor anything of
    // that project: the stored raw stands in as one no record can equal
    const storedShot = new Map(storedShots.map((s) => [s.id, inScope(scope, s.projectId) ? s.raw : HIDDEN_RAW]));
    const holders = new Map<string, Holder[]>();
    for (const h of holderRows) {
      const k = pairKey(h.sensorId, h.siteId);
      if (!holders.has(k)) holders.set(k, []);
      holders.get(k)!.push({ projectId: h.projectId, name: h.name, retiredAt: h.retiredAt });
    }
    const ctx = registryContextOf(registry);

    const receivedAt = new Date().toISOString();
    const results: SyncResult[] = [];
    const sessionRows: (typeof checkSessions.$inferInsert)[] = [];

    // 3. Sessions before their shots.
    /** Session facts a shot of this batch may use: stored ones and the ones accepted now. */
    const usable = new Map<string, SessionFacts>();
    for (const s of storedSessions) {
      // issue 14: a stored session outside the user's projects takes no shots from them (unknown to them)
      if (!inScope(scope, s.projectId)) continue;
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
      try {
        if (!rec.value) {
          reject(rec.errors!);
          continue;
        }
        const s: SyncSession = rec.value;
        const storedRow = storedSession.get(s.id);
        if (storedRow && !inScope(scope, storedRow.projectId)) {
          // issue 14: as for shots — a conflict in the usual words, and its shots are told their
          // session was refused (not "unknown", which would contradict the answer just given)
          reject(conflict("session"));
          continue;
        }
        const stored = storedRow?.raw ?? seenSessions.get(s.id);
        if (stored !== undefined) {
          if (stored === rec.raw) results.push({ kind: "session", id: s.id, status: "duplicate" });
          else results.push({ kind: "session", id: s.id, status: "rejected", errors: conflict("session") });
          // a conflicting copy never disqualifies the stored session's shots
          continue;
        }
        const errors: RecordError[] = [];
        const sensor = ctx.sensors.get(s.sensorId);
        if (!sensor) errors.push({ path: "sensorId", message: `sensor ${s.sensorId} is not in the registry` });
        // a retired sensor takes no new sessions; sessions stored before keep receiving shots
        else if (sensor.retiredAt) {
          errors.push({
            path: "sensorId",
            message: `sensor ${sensor.label} was retired on ${sensor.retiredAt.slice(0, 10)} and takes no new sessions; an admin can restore it if this session belongs to it`,
          });
        }
        if (!ctx.sites.has(s.siteId)) errors.push({ path: "siteId", message: `site ${s.siteId} is not in the registry` });
        // issue 14: the session's project (given or implied), checked against the user's projects
        let projectId: string | null = null;
        if (sensor && ctx.sites.has(s.siteId)) {
          const p = sessionProject(s, holders.get(pairKey(s.sensorId, s.siteId)) ?? [], !s.projectId || ctx.rules.has(s.projectId), scope);
          if ("error" in p) errors.push(p.error);
          else projectId = p.projectId;
        }
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
        seenSessions.set(s.id, rec.raw);
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
      } catch (e) {
        reject(internalErrors("session", rec.id, e));
      }
    }

    // issue 14: a shot naming a tape or reference EDM its session's project does not list is
    // refused on that path (an unknown one in the same words: the registry's other ids stay
    // unseen); its batch-mates go on. Stored duplicates are left to the stage's duplicate check.
    const linked = new Set([...tapeLinks.map((l) => `tape|${l.projectId}|${l.id}`), ...edmLinks.map((l) => `edm|${l.projectId}|${l.id}`)]);
    const shotRecsChecked = shotRecs.map((rec) => {
      const shot = rec.value;
      if (!shot || storedShot.has(shot.id)) return rec;
      const session = usable.get(shot.sessionId);
      if (!session?.projectId) return rec;
      const errors = unlistedReferenceErrors(shot, session.projectId, linked);
      return errors.length ? { ...rec, value: null, errors } : rec;
    });

    // 4. Shots: duplicates, their session, then the authoritative computation and the
    //    insert rows: off this thread too (sync-work.ts).
    const stageInput: ShotStageInput = { shotRecs: shotRecsChecked, storedShot, usable, rejectedSessions, ctx, meta: { deviceId, syncedBy: actor.id, receivedAt } };
    const stage: { results: SyncResult[]; rows: ShotRow[] } = pool ? await pool.run(stageInput, { name: "shots" }) : await shotStage(stageInput, { computeShotRecord, shotInsertRow }, yieldToLoop);
    results.push(...stage.results);
    let shotRows = stage.rows;

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
      const stmts: Stmt[] = [...sessionStmts, ...shotStmts, stmtOf(audit)];
      let done: WriteResult[];
      try {
        done = await writeBatch(db, stmts);
      } catch (e) {
        // Busy, locked or out of reach: retryTransient tries again, then answers 503.
        if (isTransientDbError(e)) throw e;
        // Something in one record that the checks above missed: the batch rolled back, so
        // store what can be stored, a record a transaction, and refuse the rest by name.
        console.error("sync: the batch write failed; writing its records one at a time", e);
        const stored = await writeOneAtATime(db, sessionRows, shotRows, results);
        const after = { accepted: 0, duplicate: 0, rejected: 0 };
        for (const r of results) after[r.status]++;
        await db.insert(auditLog).values({
          actorUserId: actor.id,
          action: "sync",
          entity: "device",
          entityId: deviceId,
          detail: { sessions: stored.sessions, shots: stored.shots.length, ...after, oneAtATime: true },
        });
        return { status: 200, body: { results }, sensorIds: [...new Set(stored.shots.map((r) => r.sensorId))] };
      }
      const sessionsWritten = writtenIds(done.slice(0, sessionStmts.length));
      const shotsWritten = writtenIds(done.slice(sessionStmts.length, sessionStmts.length + shotStmts.length));
      if (sessionsWritten.size !== sessionRows.length || shotsWritten.size !== shotRows.length) {
        // Lost a race to another writer for some ids. (The audit row above counted them as
        // accepted; what the records are now is in the tables.) A session stored meanwhile
        // with other content leaves our shots of it computed with our copy's air: only a
        // client reusing ids with other content can cause that, and it is told of the conflict.
        await reclassify(
          db,
          results,
          [
            ...sessionRows.filter((r) => !sessionsWritten.has(r.id)).map((r) => ({ kind: "session" as const, id: r.id, raw: r.raw })),
            ...shotRows.filter((r) => !shotsWritten.has(r.id)).map((r) => ({ kind: "shot" as const, id: r.id, raw: r.raw })),
          ],
          scope,
        );
        shotRows = shotRows.filter((r) => shotsWritten.has(r.id));
      }
    }
    return { status: 200, body: { results }, sensorIds: [...new Set(shotRows.map((r) => r.sensorId))] };
  });
}
