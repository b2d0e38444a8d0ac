import { createClient, type Client } from "@libsql/client";
import { drizzle, type LibSQLDatabase } from "drizzle-orm/libsql";
import { mkdirSync } from "node:fs";
import { dirname, resolve } from "node:path";
import { getEnv } from "~/env.server";
import * as schema from "./schema";

export type Db = LibSQLDatabase<typeof schema> & { $client: Client };

let db: Db | undefined;

/** A libSQL file's folder must exist before the client opens it. */
export function ensureFileFolder(url: string) {
  if (!url.startsWith("file:")) return;
  const path = url.slice("file:".length).replace(/^\/\/(?=\/)/, "");
  if (path === ":memory:" || path === "") return;
  mkdirSync(dirname(resolve(path)), { recursive: true });
}

/** A database file another thread of this process can open too (not memory, not a server): issue 16's worker threads. */
export function isSharedFile(url: string) {
  return url.startsWith("file:") && !url.includes(":memory:");
}

export function openDb(url: string, authToken?: string): Db {
  ensureFileFolder(url);
  // timeout: the busy timeout of every local connection (PRAGMAs reach only one of them).
  const client = createClient({ url, authToken, timeout: 5000 });
  return drizzle(client, { schema }) as Db;
}

/**
 * WAL checkpoints off the request path (issue 16, docs/decisions/0011). SQLite's automatic
 * checkpoint runs inside the COMMIT of whichever connection passes 1,000 WAL pages: on the
 * sync worker that is a sync's answer waiting for it. On the production server a report worker
 * thread checkpoints instead, after syncs and every few seconds (report-pool.server.ts); the
 * sync workers' write transactions keep an automatic checkpoint only as a safety net at this
 * many pages (about 40 MB of WAL), should that thread not run (sync-write.server.ts).
 */
export const DEFERRED_AUTOCHECKPOINT_PAGES = 10_000;

export async function prepareConnection(d: Db) {
  // WAL lets readers go on while the sync action writes; busy_timeout waits out short locks.
  const url = getEnv().DATABASE_URL;
  if (url.startsWith("file:")) {
    await d.$client.execute("PRAGMA journal_mode = WAL");
    await d.$client.execute("PRAGMA busy_timeout = 5000");
  }
  await d.$client.execute("PRAGMA foreign_keys = ON");
}

export function getDb(): Db {
  if (!db) {
    const env = getEnv();
    db = openDb(env.DATABASE_URL, env.DATABASE_AUTH_TOKEN);
    void prepareConnection(db);
  }
  return db;
}

/** Tests point the process at another file between suites. */
export function resetDb() {
  db?.$client.close();
  db = undefined;
}
