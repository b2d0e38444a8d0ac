// The write half of POST /api/sync: multi-row INSERT statements built from drizzle's column map,
// the one transaction that writes them (on a sync worker thread for the server's own database
// file), the ids it wrote, and, when a write fails, the records written one at a time so that one
// bad record never takes its batch down.
import { getTableColumns, getTableName, type InferInsertModel } from "drizzle-orm";
import type { SQLiteTable } from "drizzle-orm/sqlite-core";
import type { ResultSet } from "@libsql/client";
import { DEFERRED_AUTOCHECKPOINT_PAGES, getDb, isSharedFile, type Db } from "~/db/client.server";
import { getEnv } from "~/env.server";
import { isTransientDbError } from "~/db/transient.server";
import { checkSessions, shots } from "~/db/schema";
import { type SyncResult } from "~/contract/sync";
import { syncPool } from "./sync-pool.server";
import { conflict } from "./sync-work";
import { inScope, type Scope } from "./scope.server";

/** Equals no canonical record: the stored raw of a record outside the user's projects. */
export const HIDDEN_RAW = "\u0000not yours";

/** Multi-row inserts stay far below SQLite's 32 766 bound variables (31 columns × 250 rows). */
export const INSERT_CHUNK = 250;

export type Stmt = { sql: string; args: (string | number | null)[] };
/** A query drizzle built (its `.toSQL()`) as a statement for writeBatch / commitStatements. */
export const stmtOf = (q: { sql: string; params: unknown[] }): Stmt => ({ sql: q.sql, args: q.params as Stmt["args"] });

/** What the write answers: the RETURNING rows of each statement (a ResultSet, or its rows from a worker). */
export type WriteResult = { rows: ArrayLike<unknown>[] };

/**
 * Multi-row INSERT statements built by hand from drizzle's column map: the same SQL drizzle
 * writes, without its per-value query builder, which cost more than the insert itself here.
 */
export function insertStatements<T extends SQLiteTable>(table: T, rows: InferInsertModel<T>[]): Stmt[] {
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
    // an id stored meanwhile (another instance, another request) is skipped, not an error
    const sql = `INSERT INTO "${getTableName(table)}" (${names}) VALUES ${part.map(() => one).join(", ")} ON CONFLICT("id") DO NOTHING RETURNING "id", rowid`;
    return { sql, args };
  });
}

/** id → rowid of the rows the insert statements wrote (their RETURNING rows). */
export function writtenIds(results: WriteResult[]): Map<string, number> {
  const out = new Map<string, number>();
  for (const rs of results) for (const row of rs.rows) out.set(String(row[0]), Number(row[1]));
  return out;
}

/**
 * Records we meant to write whose ids another writer stored between our read and our write:
 * classified again against the stored raw, as if they had been stored before the request.
 */
export async function reclassify(db: Db, results: SyncResult[], lost: { kind: "session" | "shot"; id: string; raw: string }[], scope: Scope) {
  // a write-mode batch runs on a libSQL server's primary (a replica forwards it), where the
  // rows that won the race are certain to be; a replica's own copy may lag behind
  // issue 14: with each row's project, so a winner in a project the user cannot see answers as any conflict
  const sel = (table: typeof checkSessions | typeof shots, ids: string[]): Stmt[] =>
    chunks(ids, 500).map((part) => ({
      sql:
        table === shots
          ? `SELECT s."id", s."raw", c."project_id" FROM "shots" s JOIN "check_sessions" c ON c."id" = s."session_id" WHERE s."id" IN (${part.map(() => "?").join(", ")})`
          : `SELECT "id", "raw", "project_id" FROM "${getTableName(table)}" WHERE "id" IN (${part.map(() => "?").join(", ")})`,
      args: part,
    }));
  const stmts = [
    ...sel(
      checkSessions,
      lost.filter((l) => l.kind === "session").map((l) => l.id),
    ),
  ];
  const nSes = stmts.length;
  stmts.push(
    ...sel(
      shots,
      lost.filter((l) => l.kind === "shot").map((l) => l.id),
    ),
  );
  const got = await db.$client.batch(stmts, "write");
  const pairs = (rs: ResultSet[]) => rs.flatMap((r) => r.rows.map((row) => ({ id: String(row[0]), raw: inScope(scope, row[2] == null ? null : String(row[2])) ? String(row[1]) : HIDDEN_RAW })));
  const ses = pairs(got.slice(0, nSes));
  const sh = pairs(got.slice(nSes));
  const stored = new Map([...ses.map((r) => [`session:${r.id}`, r.raw] as const), ...sh.map((r) => [`shot:${r.id}`, r.raw] as const)]);
  const at = new Map(results.map((r, i) => [`${r.kind}:${r.id}`, i] as const).filter(([, i]) => results[i]!.status === "accepted"));
  for (const l of lost) {
    const i = at.get(`${l.kind}:${l.id}`);
    if (i === undefined) continue;
    const raw = stored.get(`${l.kind}:${l.id}`);
    // a skipped insert whose row is not there cannot happen; say so rather than claim it stored
    if (raw === undefined) throw new Error(`The ${l.kind} ${l.id} was neither written nor found stored.`);
    results[i] = raw === l.raw ? { kind: l.kind, id: l.id, status: "duplicate" } : { kind: l.kind, id: l.id, status: "rejected", errors: conflict(l.kind) };
  }
}

/**
 * The request's one write transaction. With the worker pool, for the server's own database
 * file, it runs on a sync worker thread's connection (issue 16): the local libSQL client runs a
 * statement synchronously on its caller's thread, and 500 inserts into the indexed shots table
 * with their commit took 80–550 ms of the request thread under load, holding every other
 * request. SQLite serialises writers by its lock; a writer waiting for it waits on the worker.
 */
export async function writeBatch(db: Db, stmts: Stmt[]): Promise<WriteResult[]> {
  const pool = db === getDb() ? syncPool() : null;
  if (pool && isSharedFile(getEnv().DATABASE_URL)) {
    try {
      return (await pool.run(stmts, { name: "write" })) as WriteResult[];
    } catch (e) {
      // the error crossed the thread as name and message: what isTransientDbError reads
      throw e instanceof Error ? e : new Error(String(e));
    }
  }
  return commitStatements(db, stmts);
}

let deferCheckpointsHere = false;
/** Whether this thread's write transactions leave WAL checkpoints to a report thread (decision 0011; the sync worker sets it). */
export function deferCheckpointsOnThisThread(on: boolean) {
  deferCheckpointsHere = on;
}
const DEFER: Stmt = { sql: `PRAGMA wal_autocheckpoint = ${DEFERRED_AUTOCHECKPOINT_PAGES}`, args: [] };

/**
 * One write transaction of the statements on this thread's connection. With checkpoints deferred
 * (decision 0011) its first statement raises the connection's automatic-checkpoint threshold:
 * in the transaction itself, because the client keeps a small pool of connections and a
 * setting made once reaches only the one it ran on; SQLite reads it at this COMMIT.
 */
export async function commitStatements(db: Db, stmts: Stmt[]): Promise<ResultSet[]> {
  if (!deferCheckpointsHere) return db.$client.batch(stmts, "write");
  const [, ...results] = await db.$client.batch([DEFER, ...stmts], "write");
  return results;
}

/** Lets the requests that waited run between two slices of a batch on this thread. */
export const yieldToLoop = () => new Promise<void>((resolve) => setImmediate(resolve));

export function chunks<T>(xs: T[], n: number): T[][] {
  const out: T[][] = [];
  for (let i = 0; i < xs.length; i += n) out.push(xs.slice(i, i + n));
  return out;
}

/**
 * The fallback write after a batch failed for a reason that is not a concurrent writer: each
 * session, then each shot, in its own transaction. A record that still fails is refused in
 * `results` (its shots with it, for a session); the others are stored.
 */
export async function writeOneAtATime(
  db: Db,
  sessionRows: (typeof checkSessions.$inferInsert)[],
  shotRows: (typeof shots.$inferInsert)[],
  results: SyncResult[],
): Promise<{ sessions: number; shots: (typeof shots.$inferInsert)[] }> {
  const refuse = (kind: "session" | "shot", id: string, message: string) => {
    const r = results.find((x) => x.kind === kind && x.id === id && x.status === "accepted");
    if (r) Object.assign(r, { status: "rejected", errors: [{ path: "", message }] });
  };
  const failedSessions = new Set<string>();
  let sessions = 0;
  for (const row of sessionRows) {
    try {
      await db.$client.batch(insertStatements(checkSessions, [row]), "write");
      sessions++;
    } catch (e) {
      if (isTransientDbError(e)) throw e;
      console.error(`sync: session ${row.id} could not be written`, e);
      failedSessions.add(row.id);
      refuse("session", row.id, "this session could not be stored by the server; the error is logged — send it again later or ask an admin");
    }
  }
  const stored: (typeof shots.$inferInsert)[] = [];
  for (const row of shotRows) {
    if (failedSessions.has(row.sessionId)) {
      refuse("shot", row.id, `its session ${row.sessionId} could not be stored: send both again`);
      continue;
    }
    try {
      await db.$client.batch(insertStatements(shots, [row]), "write");
      stored.push(row);
    } catch (e) {
      if (isTransientDbError(e)) throw e;
      console.error(`sync: shot ${row.id} could not be written`, e);
      refuse("shot", row.id, "this shot could not be stored by the server; the error is logged — send it again later or ask an admin");
    }
  }
  return { sessions, shots: stored };
}
