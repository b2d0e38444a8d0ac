// npm run bench — every speed and size figure of the project, in one run. Each part is a
// module with `run(): Promise<string[]>`; figures are printed, never asserted in tests.
const parts = [
  { name: "ranging core", module: "./domain.bench.ts" },
  { name: "server ingest and report", module: "./server.bench.ts" },
  { name: "field tablet", module: "./field.bench.ts" },
  { name: "sync past one machine (BENCH_CLUSTER=1)", module: "./cluster.bench.ts" },
  { name: "scans (issue 18)", module: "./scan.bench.ts" },
  { name: "report read path (issue 16; BENCH_MILLION=1 adds 1,000,000 shots)", module: "./report.bench.ts" },
];

const only = process.argv.slice(2);
let failed = 0;
for (const part of parts) {
  if (only.length && !only.some((o) => part.module.includes(o))) continue;
  console.log(`\n== ${part.name} ==`);
  try {
    const mod = (await import(part.module)) as { run: () => Promise<string[]> };
    for (const line of await mod.run()) console.log(line);
  } catch (error) {
    failed++;
    console.log(`  could not run: ${error instanceof Error ? error.message : String(error)}`);
  }
}
process.exit(failed ? 1 : 0);
export {};
