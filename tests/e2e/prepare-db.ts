// Migrates the e2e database and adds one user per role (the fixtures the browser tests use).
import { getDb } from "~/db/client.server";
import { migrateDb } from "~/db/migrate.server";
import { users } from "~/db/schema";
import { TEST_USERS } from "./users";

const db = getDb();
await migrateDb(db);
for (const u of TEST_USERS) {
  await db.insert(users).values(u).onConflictDoNothing();
}
db.$client.close();
