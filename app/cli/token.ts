// npm run token -- --email <user e-mail> [--name <label>]
// Creates an API token acting as that user. Notes go to standard error; the token alone is
// the last line of standard output (TOKEN=$(npm run -s token -- --email … | tail -n 1)).
// Only its hash is stored: it cannot be shown again. Migrates DATABASE_URL first.
import { parseArgs } from "node:util";
import { getDb } from "~/db/client.server";
import { migrateDb } from "~/db/migrate.server";
import { createTokenFor } from "~/models/tokens.server";
import { findUserByEmail } from "~/models/users.server";

const USAGE = "Usage: npm run token -- --email <user e-mail> [--name <label>]";

function fail(message: string, code = 2): never {
  console.error(`${message}\n${USAGE}`);
  process.exit(code);
}

let values: { email?: string; name?: string };
try {
  values = parseArgs({ args: process.argv.slice(2), options: { email: { type: "string" }, name: { type: "string" } } }).values;
} catch (e) {
  fail(e instanceof Error ? e.message : String(e));
}
if (!values.email) fail("--email is required.");

const db = getDb();
await migrateDb(db);
const user = await findUserByEmail(values.email);
if (!user) {
  db.$client.close();
  fail(`No user with the e-mail ${values.email}. Add one first: npm run user -- add --email ${values.email} --role <role>`, 1);
}
const name = values.name?.trim() || `command line ${new Date().toISOString().slice(0, 10)}`;
const made = await createTokenFor(null, user.id, name);
db.$client.close();
if (!made) fail("The user disappeared while the token was made.", 1);
console.error(`API token “${name}” for ${user.email} (${user.role}). Shown once; only its hash is stored.`);
if (!user.active) console.error("Note: this user is deactivated, so the token will not work until they are reactivated.");
console.log(made.token);
