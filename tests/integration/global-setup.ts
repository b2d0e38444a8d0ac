// Migrates one base database per test run; each worker copies it (see setup.ts).
import { mkdirSync, rmSync } from "node:fs";
import { resolve } from "node:path";
import { createClient } from "@libsql/client";
import { drizzle } from "drizzle-orm/libsql";
import { migrate } from "drizzle-orm/libsql/migrator";

export const TMP = resolve(process.cwd(), "tests/.tmp");
export const BASE_DB = resolve(TMP, "base.db");

export default async function setup() {
  mkdirSync(TMP, { recursive: true });
  for (const f of [BASE_DB, BASE_DB + "-wal", BASE_DB + "-shm"]) rmSync(f, { force: true });
  const client = createClient({ url: `file:${BASE_DB}` });
  await migrate(drizzle(client), { migrationsFolder: resolve(process.cwd(), "drizzle") });
  client.close();
}
