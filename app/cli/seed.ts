// npm run db:seed [-- --reset] — migrates DATABASE_URL, then loads the invented Fernhollow demo
// through the real model functions. Refuses a second time unless --reset, which first deletes
// the demo's own rows (everything else in the database stays).
import { getDb } from "~/db/client.server";
import { migrateDb } from "~/db/migrate.server";
import { getEnv } from "~/env.server";
import { DEMO_USERS } from "~/seed/scenario";
import { deleteDemoRows, demoIsSeeded, describeSeed, seedDemo } from "~/seed/seed.server";

const args = process.argv.slice(2);
const unknown = args.filter((a) => a !== "--reset");
if (unknown.length) {
  console.error(`Unknown option ${unknown.join(" ")}. Usage: npm run db:seed [-- --reset]`);
  process.exit(2);
}
const reset = args.includes("--reset");
const env = getEnv();
const db = getDb();
await migrateDb(db);

if (await demoIsSeeded()) {
  if (!reset) {
    console.error(`The demo is already in ${env.DATABASE_URL}. Run \`npm run db:seed -- --reset\` to delete it and load it again.`);
    db.$client.close();
    process.exit(1);
  }
  await deleteDemoRows();
  console.log("Deleted the previous demo rows.");
}

const summary = await seedDemo();
for (const line of describeSeed(summary)) console.log(line);
console.log(`Database: ${env.DATABASE_URL}`);
console.log("Demo sign-in addresses (a one-time code is e-mailed at sign-in):");
const width = Math.max(...DEMO_USERS.map((u) => u.email.length));
for (const u of DEMO_USERS) console.log(`  ${u.role.padEnd(6)}  ${u.email.padEnd(width)}  ${u.name}`);
db.$client.close();
process.exit(summary.results.rejected.length ? 1 : 0);
