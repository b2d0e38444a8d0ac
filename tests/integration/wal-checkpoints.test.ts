// Issue 16, decision 0011: on the production server the WAL is checkpointed on a report worker
// thread after syncs (and every few seconds), not inside the COMMIT of a sync worker's write.
// SQLite's automatic checkpoint (sqlite.org "PRAGMA wal_autocheckpoint": after a COMMIT that
// leaves 1,000 pages or more in the WAL, by default) stays on those writes only as a safety net
// at 10,000 pages. The checkpoint's answer is SQLite's (sqlite.org "PRAGMA wal_checkpoint":
// busy, the WAL's frames, the frames checkpointed); a PASSIVE one with no reader in the way
// copies every frame into the database file.
import { mkdtempSync, rmSync, statSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, expect, test } from "vitest";
import { verdictNoticesSettled } from "~/models/verdict-notice.server";
import { DEFERRED_AUTOCHECKPOINT_PAGES, openDb } from "~/db/client.server";
import { checkpointsSettled, checkpointStats, closeReportPool, reportPool } from "~/models/report-pool.server";
import { closeSyncPool, DEFER_CHECKPOINTS_ENV, syncPool } from "~/models/sync-pool.server";
import { commitStatements, deferCheckpointsOnThisThread } from "~/models/sync-write.server";
import { action } from "~/routes/api.sync";
import { apiRequest, call, makeSensor, makeSite, makeUser, shareProject } from "../support/registry-fixtures";

const saved = { sync: process.env.SYNC_WORKERS, report: process.env.REPORT_WORKERS };
const dir = mkdtempSync(join(tmpdir(), "shotbook-wal-"));
afterAll(async () => {
  deferCheckpointsOnThisThread(false);
  await verdictNoticesSettled(); // its verdict check writes through the pool
  await closeSyncPool();
  await closeReportPool();
  for (const [k, v] of [
    ["SYNC_WORKERS", saved.sync],
    ["REPORT_WORKERS", saved.report],
  ] as const) {
    if (v === undefined) delete process.env[k];
    else process.env[k] = v;
  }
  rmSync(dir, { recursive: true, force: true });
});

/** About 6 MB (1,500 rows of 4,000 random bytes: over 1,400 pages of 4,096 bytes) in one write transaction through commitStatements. */
async function bigWrite(name: string) {
  const path = join(dir, `${name}.db`);
  const db = openDb(`file:${path}`);
  await db.$client.execute("PRAGMA journal_mode = WAL");
  await db.$client.execute("CREATE TABLE blobs (b BLOB)");
  const before = statSync(path).size;
  const results = await commitStatements(db, [
    { sql: "WITH RECURSIVE k(n) AS (SELECT 1 UNION ALL SELECT n + 1 FROM k WHERE n < 1500) INSERT INTO blobs SELECT randomblob(4000) FROM k", args: [] },
    { sql: "SELECT count(*) FROM blobs", args: [] },
  ]);
  return { db, path, before, after: statSync(path).size, wal: statSync(`${path}-wal`).size, count: Number(results[1]!.rows[0]![0]) };
}

test("a write with checkpoints deferred leaves its pages in the WAL; SQLite's own checkpoint copies them at COMMIT otherwise", async () => {
  deferCheckpointsOnThisThread(false);
  const own = await bigWrite("own");
  expect(own.count).toBe(1500); // the results are the statements' own, the setting's left out
  expect(own.after - own.before).toBeGreaterThan(5_000_000); // checkpointed into the database file at COMMIT
  own.db.$client.close();

  deferCheckpointsOnThisThread(true);
  const deferred = await bigWrite("deferred");
  expect(deferred.count).toBe(1500);
  expect(deferred.after).toBe(deferred.before); // nothing copied yet
  expect(deferred.wal).toBeGreaterThan(5_000_000);
  // the checkpoint a report thread runs, here from another connection: every frame copied
  const other = openDb(`file:${deferred.path}`);
  const row = (await other.$client.execute("PRAGMA wal_checkpoint(PASSIVE)")).rows[0]!;
  const [busy, walPages, checkpointed] = [0, 1, 2].map((i) => Number(row[i]));
  expect(busy).toBe(0);
  expect(walPages).toBeGreaterThan(1400);
  expect(walPages).toBeLessThan(DEFERRED_AUTOCHECKPOINT_PAGES);
  expect(checkpointed).toBe(walPages);
  expect(statSync(deferred.path).size - deferred.before).toBeGreaterThan(5_000_000);
  other.$client.close();
  deferred.db.$client.close();
  deferCheckpointsOnThisThread(false);
});

async function syncOneSession() {
  const [crew, sensor, site] = await Promise.all([makeUser("crew"), makeSensor(), makeSite({ targets: [{ label: "grey", reflectancePct: 50 }] })]);
  await shareProject([sensor], [site], [crew]);
  const session = { id: crypto.randomUUID(), sensorId: sensor.id, siteId: site.id, startedAt: "2026-05-04T08:10:00+02:00", airTempC: 18.5, pressureHpa: 1004.2, humidityPct: 62 };
  const shots = Array.from({ length: 40 }, (_, i) => ({
    id: crypto.randomUUID(),
    sessionId: session.id,
    takenAt: "2026-05-04T08:20:00+02:00",
    targetId: site.targets[0]!.id,
    reference: { method: "edm", distanceM: 10 + i },
    readings: { rangesM: [10 + i + 0.002] },
    reflectancePct: 50,
    illuminanceKlux: 20,
  }));
  const res = await call(action, apiRequest("/api/sync", { user: crew, json: { deviceId: "tablet-wal", sessions: [session], shots } }));
  expect(res.status).toBe(200);
  expect((res.json as { results: { status: string }[] }).results.filter((r) => r.status === "accepted")).toHaveLength(41);
}

test("with report threads, the sync workers defer their checkpoints and a sync through them is checkpointed on a report thread", async () => {
  process.env.REPORT_WORKERS = "1";
  process.env.SYNC_WORKERS = "1";
  await verdictNoticesSettled(); // the verdict check after a sync reads and writes through the pools
  await closeSyncPool();
  await closeReportPool();
  expect(reportPool()).not.toBeNull();
  expect(syncPool()!.options.env?.[DEFER_CHECKPOINTS_ENV]).toBe("1");

  const before = checkpointStats().runs;
  await syncOneSession();
  await checkpointsSettled();
  const after = checkpointStats();
  expect(after.runs).toBeGreaterThan(before);
  expect(after.failed).toBe(0);
  // the sync's pages were in the WAL and all of them reached the database file
  expect(after.last!.busy).toBe(0);
  expect(after.last!.walPages).toBeGreaterThan(0);
  expect(after.last!.checkpointed).toBe(after.last!.walPages);
});

test("without report threads, the sync workers keep SQLite's own checkpoint and nothing else checkpoints", async () => {
  await verdictNoticesSettled(); // the verdict check after a sync reads and writes through the pools
  await closeSyncPool();
  await closeReportPool();
  process.env.REPORT_WORKERS = "0";
  process.env.SYNC_WORKERS = "1";
  expect(reportPool()).toBeNull();
  expect(syncPool()!.options.env?.[DEFER_CHECKPOINTS_ENV]).toBe("");
  const before = checkpointStats().runs;
  await syncOneSession();
  await checkpointsSettled();
  expect(checkpointStats().runs).toBe(before);
});
