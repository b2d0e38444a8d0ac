import { migrate } from "drizzle-orm/libsql/migrator";
import { resolve } from "node:path";
import type { Db } from "./client.server";

export const MIGRATIONS_FOLDER = resolve(process.cwd(), "drizzle");

export async function migrateDb(db: Db) {
  await migrate(db, { migrationsFolder: MIGRATIONS_FOLDER });
}
