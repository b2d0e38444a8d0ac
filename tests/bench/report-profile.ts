// Where a sensor report's first view spends its time (issue 16), step by step in one process:
// the state read, each query of the sums read, the domain's figures and the JSON, on a fresh
// connection to a freshly seeded database (the bench's seed). CPU time (process.cpuUsage) beside
// wall time, which a busy machine stretches. Printed, never asserted.
// Run: npx tsx tests/bench/report-profile.ts [shots=100000]
import { spawn } from "node:child_process";
import { mkdtempSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { seed } from "./report.bench.ts";
import { step } from "./targets.ts";

const n = Number(process.argv[2] ?? 100_000);
// PROFILE_DIR=<dir>: a database the bench or a previous run seeded there (bench.db), read as it is
const dir = process.env.PROFILE_DIR ?? mkdtempSync(join(tmpdir(), "shotbook-report-profile-"));
process.env.DATABASE_URL = `file:${join(dir, "bench.db")}`;
process.env.SESSION_SECRET ??= "report-profile-" + "x".repeat(40);
process.env.DATA_DIR = join(dir, "data");
let sensorId = "bench-sensor";
if (!process.env.PROFILE_DIR) {
  const out = join(dir, "users.json");
  await new Promise<void>((res, rej) => {
    const p = spawn(process.execPath, ["--import", "tsx", "tests/bench/report-prepare.ts", out], { stdio: "inherit", env: process.env });
    p.on("exit", (c) => (c === 0 ? res() : rej(new Error(`prepare exited ${c}`))));
  });
  const { qaId } = JSON.parse(readFileSync(out, "utf8")) as { qaId: string };
  sensorId = await seed(process.env.DATABASE_URL, n, qaId);
}

const { getDb, prepareConnection } = await import("~/db/client.server");
const { groupsQuery, sortedErrorsQuery, sortedErrorsOf, usesQuery, groupsOf, keptGroupsQuery, outsideQuery, readSums } = await import("~/models/report-sums.server");
const { reportSums } = await import("~/db/schema");
const { selectionWhere, sessionsQuery } = await import("~/models/report-selection.server");
const { DEFAULT_RULE, reportFromAggregates } = await import("~/domain");
const { sensorSpecOf } = await import("~/models/registry-context.server");
const { sensors } = await import("~/db/schema");
const { eq } = await import("drizzle-orm");
const db = getDb();
await prepareConnection(db);

const where = selectionWhere(db, sensorId, {}, null);
const [sensorRow] = await db.select().from(sensors).where(eq(sensors.id, sensorId));
const spec = sensorSpecOf(sensorRow!);
const tol = { toleranceMm: sensorRow!.toleranceMm, tolerancePpm: sensorRow!.tolerancePpm };
for (const round of [1, 2]) {
  console.log(`-- round ${round} (${n.toLocaleString("en-GB")} shots)`);
  const g = await step("grouped sums (scan)", () => groupsQuery(db, where, tol, DEFAULT_RULE));
  await step("kept sums regrouped (report_sums)", () => keptGroupsQuery(db, where, [eq(reportSums.sensorId, sensorId)], DEFAULT_RULE));
  await step("shots outside their limit (error index)", () => outsideQuery(db, where, tol, DEFAULT_RULE));
  const s = await step("sorted errors (group_concat text)", () => sortedErrorsQuery(db, where));
  const e = await step("  text → Float64Array", () => sortedErrorsOf(s[0]));
  const ses = await step("sessions", () => sessionsQuery(db, sensorId));
  await step("certificate uses (DISTINCT)", () => usesQuery(db, where));
  const { groups, kE, kD } = groupsOf(g, new Map(ses.map((x) => [x.id, x.startedAt])));
  const r = await step("domain: reportFromAggregates", () => reportFromAggregates({ sensor: spec, rule: DEFAULT_RULE, aggregates: { kE, kD, groups, sortedErrors: e }, lastSignedOffBiasMm: null }));
  await step("JSON.stringify", () => JSON.stringify(r));
  console.log(`   ${g.length} groups, ${e.length} sorted errors`);
  await step("the whole read (readSums, one batch)", () => readSums(db, { sensorId, q: {}, projectIds: null, tolerance: tol, rule: DEFAULT_RULE }));
}
db.$client.close();
if (process.env.KEEP_DB === "1" || process.env.PROFILE_DIR) console.log(`kept ${process.env.DATABASE_URL} (sensor ${sensorId})`);
else rmSync(dir, { recursive: true, force: true });
