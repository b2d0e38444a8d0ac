// `npm run db:seed` as an operator runs it (tsx app/cli/seed.ts) on this file's own database:
// it loads the demo once, refuses a second time, and with --reset replaces only the demo's rows.
import { spawnSync } from "node:child_process";
import { count, eq } from "drizzle-orm";
import { expect, test } from "vitest";
import { getDb, resetDb } from "~/db/client.server";
import { sensors, shots, users } from "~/db/schema";
import { createSensor } from "~/models/sensors.server";
import { buildSensorBody } from "~/seed/builders";
import { buildDemoScenario, DEMO_USERS } from "~/seed/scenario";

function seedCli(...args: string[]) {
  const r = spawnSync("npx", ["tsx", "app/cli/seed.ts", ...args], { env: process.env, encoding: "utf8", timeout: 120_000 });
  return { code: r.status, out: r.stdout, err: r.stderr };
}

async function counts() {
  const db = getDb();
  const [s] = await db.select({ n: count() }).from(sensors);
  const [h] = await db.select({ n: count() }).from(shots);
  const [u] = await db.select({ n: count() }).from(users);
  return { sensors: s!.n, shots: h!.n, users: u!.n };
}

test("db:seed loads the demo, refuses a second time, and --reset replaces only the demo rows", async () => {
  // a sensor of the firm's own, made before the demo: --reset must leave it alone
  const own = await createSensor(null, buildSensorBody({ label: "Own scanner", serial: "OWN-1" }));
  expect(own.status).toBe(201);
  resetDb();

  const first = seedCli();
  expect(first.err).toBe("");
  expect(first.code).toBe(0);
  const shotsInDemo = buildDemoScenario().shots.length;
  expect(first.out).toContain(`${shotsInDemo} shots`);
  expect(first.out).toContain("0 rejected");
  for (const u of DEMO_USERS) expect(first.out).toContain(u.email);
  expect(await counts()).toEqual({ sensors: 4, shots: shotsInDemo, users: 5 });
  resetDb();

  const again = seedCli();
  expect(again.code).toBe(1);
  expect(again.err).toContain("--reset");
  expect(await counts()).toEqual({ sensors: 4, shots: shotsInDemo, users: 5 });
  resetDb();

  const reset = seedCli("--reset");
  expect(reset.code).toBe(0);
  expect(reset.out).toContain("Deleted the previous demo rows.");
  expect(await counts()).toEqual({ sensors: 4, shots: shotsInDemo, users: 5 });
  const kept = await getDb().select({ id: sensors.id }).from(sensors).where(eq(sensors.serial, "OWN-1"));
  expect(kept.map((k) => k.id)).toEqual([(own.body as { id: string }).id]);

  expect(seedCli("--bogus").code).toBe(2);
}, 240_000);
