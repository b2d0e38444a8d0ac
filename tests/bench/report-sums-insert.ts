// What the kept report sums (report_sums, kept by triggers on shots: migration 0011) cost a
// write (issue 16, u16): the bench's seed of n shots into two fresh migrated databases, one
// with the triggers and one without them, timed by CPU (process.cpuUsage: the local libSQL
// client writes on this thread), several rounds alternating. Printed, never asserted.
// Run: npx tsx tests/bench/report-sums-insert.ts [shots=50000] [rounds=3]
import { spawn } from "node:child_process";
import { mkdtempSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { seed } from "./report.bench.ts";

const n = Number(process.argv[2] ?? 50_000);
const rounds = Number(process.argv[3] ?? 3);
const { createClient } = await import("@libsql/client");

async function fresh(withTriggers: boolean): Promise<{ url: string; dir: string; qaId: string }> {
  const dir = mkdtempSync(join(tmpdir(), "shotbook-sums-insert-"));
  const env = { ...process.env, DATABASE_URL: `file:${join(dir, "bench.db")}`, SESSION_SECRET: "sums-insert-" + "x".repeat(40), DATA_DIR: join(dir, "data") };
  const out = join(dir, "users.json");
  await new Promise<void>((res, rej) => {
    const p = spawn(process.execPath, ["--import", "tsx", "tests/bench/report-prepare.ts", out], { stdio: "inherit", env });
    p.on("exit", (c) => (c === 0 ? res() : rej(new Error(`prepare exited ${c}`))));
  });
  if (!withTriggers) {
    const c = createClient({ url: env.DATABASE_URL });
    for (const t of ["report_sums_insert", "report_sums_update", "report_sums_delete"]) await c.execute(`DROP TRIGGER ${t}`);
    c.close();
  }
  return { url: env.DATABASE_URL, dir, qaId: (JSON.parse(readFileSync(out, "utf8")) as { qaId: string }).qaId };
}

const cpu: Record<"with" | "without", number[]> = { with: [], without: [] };
for (let r = 0; r < rounds; r++) {
  for (const kind of r % 2 ? (["with", "without"] as const) : (["without", "with"] as const)) {
    const db = await fresh(kind === "with");
    const c0 = process.cpuUsage();
    await seed(db.url, n, db.qaId);
    const c = process.cpuUsage(c0);
    cpu[kind].push((c.user + c.system) / 1000);
    rmSync(db.dir, { recursive: true, force: true });
  }
}
const med = (x: number[]) => [...x].sort((a, b) => a - b)[x.length >> 1]!;
console.log(`insert of ${n.toLocaleString("en-GB")} shots (the bench's seed), CPU ms per round:`);
console.log(`  without the report_sums triggers  ${cpu.without.map((x) => x.toFixed(0)).join(", ")}  (median ${med(cpu.without).toFixed(0)})`);
console.log(`  with them                         ${cpu.with.map((x) => x.toFixed(0)).join(", ")}  (median ${med(cpu.with).toFixed(0)})`);
console.log(`  the triggers add ${(100 * (med(cpu.with) / med(cpu.without) - 1)).toFixed(0)} % to the insert's CPU`);
