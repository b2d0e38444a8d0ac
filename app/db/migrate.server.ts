import { migrate } from "drizzle-orm/libsql/migrator";
import { resolve } from "node:path";
import type { Db } from "./client.server";

export const MIGRATIONS_FOLDER = resolve(process.cwd(), "drizzle");

export async function migrateDb(db: Db) {
  await migrate(db, { migrationsFolder: MIGRATIONS_FOLDER });
  // issue 15: shots stored before migration 0002 get their reference uncertainty, once (imported
  // here, not at the top, so the app's models load only once the migrations have run)
  const { backfillReferenceUncertainty } = await import("~/models/recompute.server");
  const b = await backfillReferenceUncertainty(db);
  if (b.ran && b.updated) console.log(`Reference uncertainty filled in for ${b.updated} shots stored before it was computed`);
  // issue 14: tapes and EDMs linked to the projects whose sessions used them, once
  const { backfillProjectTapesEdms } = await import("~/models/tapes.server");
  const l = await backfillProjectTapesEdms(db);
  if (l.ran && (l.tapes || l.edms)) console.log(`Linked ${l.tapes} tape and ${l.edms} reference EDM uses to the projects whose sessions used them`);
}
