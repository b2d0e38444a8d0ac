// Where one POST /api/sync spends its time (issue 16): the bench's 500-shot batches through
// answerSyncBytes in this one process (SYNC_WORKERS=0: every stage inline, as a sync worker
// thread runs them), on a fresh migrated database, with a CPU profile of the ten timed batches
// when PROFILE_OUT names a file. Printed, never asserted.
// Run: SYNC_WORKERS=0 npx tsx tests/bench/sync-profile.ts [batches=10]
import { randomBytes } from "node:crypto";
import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { Session } from "node:inspector/promises";
import { makeBatch, type World } from "./server.bench.ts";
import { createRng } from "../../app/seed/builders.ts";

const batches = Number(process.argv[2] ?? 10);
const dir = mkdtempSync(join(tmpdir(), "shotbook-sync-profile-"));
Object.assign(process.env, { DATABASE_URL: `file:${join(dir, "bench.db")}`, DATA_DIR: dir, SESSION_SECRET: randomBytes(48).toString("base64"), SYNC_WORKERS: "0" });
const { getDb, prepareConnection } = await import("~/db/client.server");
const { migrateDb } = await import("~/db/migrate.server");
const db = getDb();
await prepareConnection(db);
await migrateDb(db);
const fx = await import("../support/registry-fixtures.ts");
const crew = await fx.makeUser("crew");
const sensor = await fx.makeSensor({ label: "Bench roof scanner" });
const site = await fx.makeSite({ targets: [{ reflectancePct: 10 }, { reflectancePct: 50 }, { reflectancePct: 85 }, { reflectancePct: 90, retro: true }] });
const tape = await fx.makeTape();
await fx.shareProject([sensor], [site], [crew], { tapeIds: [tape.id] });
const w: World = { sensorId: sensor.id, siteId: site.id, targetIds: site.targets.map((t: { id: string }) => t.id), tapeId: tape.id };
const rnd = createRng(7).next;
const { answerSyncBytes } = await import("~/models/sync-answer.server");
const actor = { id: crew.id, role: crew.role } as Parameters<typeof answerSyncBytes>[0];
const enc = new TextEncoder();
for (let i = 0; i < 3; i++) await answerSyncBytes(actor, enc.encode(makeBatch(w, rnd, "warm")), false);
const bodies = Array.from({ length: batches }, () => enc.encode(makeBatch(w, rnd, "profile")));
const session = new Session();
if (process.env.PROFILE_OUT) {
  session.connect();
  await session.post("Profiler.enable");
  await session.post("Profiler.setSamplingInterval", { interval: 100 });
  await session.post("Profiler.start");
}
const timings = new Map<string, number[]>();
if (process.env.TIME_BATCHES) {
  const client = db.$client as unknown as { batch: (s: unknown[], m: string) => Promise<unknown> };
  const orig = client.batch.bind(client);
  client.batch = async (stmts: unknown[], mode: string) => {
    const t = performance.now();
    try {
      return await orig(stmts, mode);
    } finally {
      const k = `${mode} ×${stmts.length} ${String((stmts[0] as { sql?: string }).sql ?? stmts[0]).slice(0, 40)}`;
      timings.set(k, [...(timings.get(k) ?? []), performance.now() - t]);
    }
  };
}
if (process.env.NO_AUTOCHECKPOINT) (await import("~/models/sync-write.server")).deferCheckpointsOnThisThread(true);
if (process.env.SYNCHRONOUS) await db.$client.execute(`PRAGMA synchronous = ${process.env.SYNCHRONOUS}`);
const c0 = process.cpuUsage();
const t0 = performance.now();
for (const b of bodies) {
  const a = await answerSyncBytes(actor, b, false);
  if (a.status !== 200) throw new Error(`answered ${a.status}: ${String(a.body).slice(0, 300)}`);
}
const ms = performance.now() - t0;
const c = process.cpuUsage(c0);
if (process.env.PROFILE_OUT) writeFileSync(process.env.PROFILE_OUT, JSON.stringify((await session.post("Profiler.stop")).profile));
console.log(`${batches} batches: ${(ms / batches).toFixed(1)} ms wall, ${((c.user + c.system) / 1000 / batches).toFixed(1)} ms CPU per batch`);
for (const [k, v] of timings) console.log(`${(v.reduce((a, b) => a + b, 0) / batches).toFixed(1).padStart(7)} ms per batch  ${v.length} × ${k}`);
if (process.env.SERIES) for (const [k, v] of timings) console.log(k.slice(0, 20), v.map((x) => x.toFixed(0)).join(" "));
db.$client.close();
rmSync(dir, { recursive: true, force: true });
