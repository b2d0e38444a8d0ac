// Where GET /api/sensors/:id/report/series spends its server CPU (issue 16, v16), in one process
// on a freshly seeded database (the report bench's seed): the whole call, cold and repeated,
// with process.cpuUsage beside wall time (a busy machine stretches wall time). With
// SERIES_CPU_PROF=<dir> the repeated calls run under the inspector's CPU profiler and the top
// self-time functions are printed. Printed, never asserted.
// Run: npx tsx tests/bench/series-profile.ts [shots=100000]
import { spawn } from "node:child_process";
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { Session } from "node:inspector/promises";
import { seed } from "./report.bench.ts";
import { step } from "./targets.ts";

const n = Number(process.argv[2] ?? 100_000);
const dir = mkdtempSync(join(tmpdir(), "shotbook-series-profile-"));
process.env.DATABASE_URL = `file:${join(dir, "bench.db")}`;
process.env.SESSION_SECRET ??= "series-profile-" + "x".repeat(40);
process.env.DATA_DIR = join(dir, "data");
const out = join(dir, "users.json");
await new Promise<void>((res, rej) => {
  const p = spawn(process.execPath, ["--import", "tsx", "tests/bench/report-prepare.ts", out], { stdio: "inherit", env: process.env });
  p.on("exit", (c) => (c === 0 ? res() : rej(new Error(`prepare exited ${c}`))));
});
const { qaId, adminId } = JSON.parse(readFileSync(out, "utf8")) as { qaId: string; adminId: string };
const sensorId = await seed(process.env.DATABASE_URL, n, qaId);

const { getDb, prepareConnection } = await import("~/db/client.server");
const series = await import("~/models/report-series.server");
const db = getDb();
await prepareConnection(db);

const admin = { id: adminId, role: "admin" as const };
const qa = { id: qaId, role: "qa" as const };
const none = new URLSearchParams();
const uncached = "clearSeriesCache" in series ? (series as { clearSeriesCache: (d: typeof db) => void }).clearSeriesCache : () => {};
for (const round of [1, 2, 3]) {
  uncached(db);
  await step(`series, admin, uncached (round ${round})`, () => series.reportSeries(admin, sensorId, none, db));
  await step(`series, admin, repeated`, () => series.reportSeries(admin, sensorId, none, db));
  uncached(db);
  await step(`series, project member, uncached`, () => series.reportSeries(qa, sensorId, none, db));
}
if (process.env.SERIES_CPU_PROF) {
  const s = new Session();
  s.connect();
  await s.post("Profiler.enable");
  await s.post("Profiler.start");
  for (let i = 0; i < 3; i++) {
    uncached(db);
    await series.reportSeries(admin, sensorId, none, db);
  }
  const { profile } = await s.post("Profiler.stop");
  writeFileSync(join(process.env.SERIES_CPU_PROF, "series.cpuprofile"), JSON.stringify(profile));
  const self = new Map<string, number>();
  const dt = profile.timeDeltas ?? [];
  const byId = new Map(profile.nodes.map((x) => [x.id, x]));
  (profile.samples ?? []).forEach((id, i) => {
    const node = byId.get(id)!;
    const cf = node.callFrame;
    const key = `${cf.functionName || "(anonymous)"} ${cf.url.split("/").slice(-2).join("/")}:${cf.lineNumber + 1}`;
    self.set(key, (self.get(key) ?? 0) + (dt[i] ?? 0) / 1000);
  });
  for (const [k, ms] of [...self].sort((a, b) => b[1] - a[1]).slice(0, 25)) console.log(`${ms.toFixed(1).padStart(8)} ms  ${k}`);
}
db.$client.close();
rmSync(dir, { recursive: true, force: true });
