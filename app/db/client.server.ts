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
