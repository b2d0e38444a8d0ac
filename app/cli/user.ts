// npm run user -- add --email <e-mail> --role <admin|qa|crew|viewer> [--name <name>]
// Creates the user, or updates role and name (idempotent: the same call again changes nothing).
// npm run user -- list   prints every user. Both migrate DATABASE_URL first.
import { parseArgs } from "node:util";
import { z } from "zod";
import { getDb } from "~/db/client.server";
import { migrateDb } from "~/db/migrate.server";
import { ROLES, users } from "~/db/schema";
import { getEnv } from "~/env.server";
import { upsertUserFromCli } from "~/models/users.server";

const USAGE = "Usage: npm run user -- add --email <e-mail> --role <admin|qa|crew|viewer> [--name <name>]\n       npm run user -- list";

function fail(message: string): never {
  console.error(`${message}\n${USAGE}`);
  process.exit(2);
}

let parsed: ReturnType<typeof parse>;
function parse() {
  return parseArgs({
    args: process.argv.slice(2),
    allowPositionals: true,
    options: { email: { type: "string" }, role: { type: "string" }, name: { type: "string" } },
  });
}
try {
  parsed = parse();
} catch (e) {
  fail(e instanceof Error ? e.message : String(e));
}
const [command, ...rest] = parsed.positionals;
if (rest.length) fail(`Unexpected argument: ${rest.join(" ")}`);

const db = getDb();
await migrateDb(db);

if (command === "add") {
  const input = z
    .object({
      email: z.string({ error: "--email is required" }).trim().pipe(z.email("--email is not an e-mail address")),
      role: z.enum(ROLES, { error: `--role must be one of ${ROLES.join(", ")}` }),
      name: z.string().max(120).optional(),
    })
    .safeParse(parsed.values);
  if (!input.success) fail(input.error.issues.map((i) => i.message).join("; "));
  const r = await upsertUserFromCli(input.data);
  const what = r.created ? "Created" : r.changed ? "Updated" : "Unchanged";
  console.log(`${what}: ${input.data.email.toLowerCase()} (${input.data.role}) in ${getEnv().DATABASE_URL}`);
} else if (command === "list") {
  const rows = await db.select({ email: users.email, name: users.name, role: users.role, active: users.active }).from(users).orderBy(users.email);
  for (const u of rows) console.log(`${u.email}\t${u.role}\t${u.active ? "active" : "deactivated"}\t${u.name}`);
  if (rows.length === 0) console.log("No users yet.");
} else {
  fail(command ? `Unknown command: ${command}` : "Missing command.");
}
db.$client.close();
