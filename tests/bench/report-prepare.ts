// Child of report.bench.ts: migrates the bench database with the app's own code and makes an
// admin and a QA user with an API token each and a signed-in browser session for the QA user
// (the same secret as the server it will meet). Writes them as JSON to the path given.
import { writeFileSync } from "node:fs";
import { createApiToken } from "~/auth/tokens.server";
import { createAuthSession } from "~/auth/session.server";
import { getDb } from "~/db/client.server";
import { migrateDb } from "~/db/migrate.server";
import { users } from "~/db/schema";

const db = getDb();
await migrateDb(db);
const made: Record<string, string> = {};
for (const role of ["admin", "qa"] as const) {
  const id = crypto.randomUUID();
  await db.insert(users).values({ id, email: `${role}@bench.fernhollow.test`, name: `Bench ${role}`, role });
  made[`${role}Id`] = id;
  made[`${role}Token`] = (await createApiToken(id, "bench")).token;
  if (role === "qa") made.qaCookie = (await createAuthSession({ id, role })).cookie;
}
writeFileSync(process.argv[2]!, JSON.stringify(made));
db.$client.close();
