// npm run db:migrate — applies pending migrations to DATABASE_URL (also run by npm start).
import { getDb } from "~/db/client.server";
import { migrateDb } from "~/db/migrate.server";
import { getEnv } from "~/env.server";

const env = getEnv();
await migrateDb(getDb());
console.log(`Migrations applied to ${env.DATABASE_URL}`);
getDb().$client.close();
