// npm run bench — every speed and size figure of the project, in one run. Each part is a
// module with `run(): Promise<string[]>`; figures are printed, never asserted in tests.
// A promised figure is a target line (tests/bench/targets.ts: "TARGET what: figure — met" or
// "— NOT met"); the summary at the end repeats every target line of the run.
//
// Switches: BENCH_MILLION=1 adds the 1,000,000-shot report (report.bench.ts reads it);
// BENCH_CLUSTER=1 adds sync past one machine. Without them the whole run stays under ~3 min.
// `npm run bench -- server field` runs only the parts whose module name contains a word given.
import { isTargetLine } from "./targets.ts";

/**
 * The parts, in order. Issue 16: the report read path (report.bench.ts: 100,000 shots, and
 * 1,000,000 with BENCH_MILLION=1) and the server under sync load (server.bench.ts) each add
 * their targets here; a module that is not there yet is reported as missing, not skipped.
 */
const parts = [
  { name: "ranging core", module: "./domain.bench.ts" },
  { name: "reports (issue 16: 100,000 shots; 1,000,000 with BENCH_MILLION=1)", module: "./report.bench.ts" },
  { name: "server under sync load (issue 16)", module: "./server.bench.ts" },
  { name: "field tablet", module: "./field.bench.ts" },
  { name: "sync past one machine (BENCH_CLUSTER=1)", module: "./cluster.bench.ts" },
  { name: "scans (issue 18)", module: "./scan.bench.ts" },
];

const only = process.argv.slice(2);
let failed = 0;
const targets: string[] = [];
const started = performance.now();
for (const part of parts) {
  if (only.length && !only.some((o) => part.module.includes(o))) continue;
  console.log(`\n== ${part.name} ==`);
  const t = performance.now();
  try {
    const mod = (await import(part.module)) as { run: () => Promise<string[]> };
    for (const line of await mod.run()) {
      console.log(line);
      if (isTargetLine(line)) targets.push(`[${part.name}] ${line.trim().replace(/^TARGET /, "")}`);
    }
  } catch (error) {
    failed++;
    const message = error instanceof Error ? error.message : String(error);
    console.log(`  could not run: ${message}`);
    targets.push(`[${part.name}] could not run — NOT met`);
  }
  console.log(`  (${((performance.now() - t) / 1000).toFixed(1)} s)`);
}
console.log(`\n== targets (${((performance.now() - started) / 1000).toFixed(0)} s in all) ==`);
for (const t of targets) console.log(`  ${t}`);
const notMet = targets.filter((t) => t.endsWith("NOT met")).length;
console.log(`  ${targets.length - notMet} met, ${notMet} NOT met`);
process.exit(failed ? 1 : 0);
export {};
