// npm run certificates [-- --today YYYY-MM-DD]
// issue 15: mails the admins about calibration certificates falling due within 30 days, once
// per certificate (the same check the server runs at start and every few hours). Migrates
// DATABASE_URL first.
import { parseArgs } from "node:util";
import { getDb } from "~/db/client.server";
import { migrateDb } from "~/db/migrate.server";
import { notifyCertificatesDue } from "~/models/certificates.server";

const { values } = parseArgs({ args: process.argv.slice(2), options: { today: { type: "string" } } });
if (values.today && !/^\d{4}-\d{2}-\d{2}$/.test(values.today)) {
  console.error("Usage: npm run certificates [-- --today YYYY-MM-DD]");
  process.exit(2);
}
const db = getDb();
await migrateDb(db);
const { sent } = await notifyCertificatesDue({ today: values.today });
for (const c of sent) console.log(`${c.kind} ${c.label}: certificate ${c.number} due ${c.due} (${c.days} days) — admins mailed`);
console.log(sent.length ? `${sent.length} notice(s) sent.` : "No certificate newly falling due.");
db.$client.close();
