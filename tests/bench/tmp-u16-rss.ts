// temporary probe (not committed): the server's RSS after boot and after each report view
import { spawn } from "node:child_process";
import { readFileSync, mkdtempSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { randomBytes } from "node:crypto";
import { seed } from "./report.bench.ts";
const n = Number(process.argv[2] ?? 100000);
const dir = process.env.PROBE_DIR ?? mkdtempSync(join(tmpdir(), "u16-rss-"));
const env: NodeJS.ProcessEnv = { ...process.env, NODE_ENV: "production", HOST: "127.0.0.1", DATABASE_URL: `file:${join(dir, "bench.db")}`, DATA_DIR: join(dir, "data"), MAIL_DIR: join(dir, "data", "mail"), SMTP_URL: "smtp://127.0.0.1:9", SESSION_SECRET: "probe-" + "y".repeat(50), COOKIE_SECURE: "false", APP_URL: "http://127.0.0.1", PORT: "39123" };
const out = join(dir, "users.json");
if (!process.env.PROBE_DIR) {
  await new Promise<void>((res) => spawn(process.execPath, ["--import", "tsx", "tests/bench/report-prepare.ts", out], { env, stdio: "inherit" }).on("exit", () => res()));
  await seed(env.DATABASE_URL!, n, JSON.parse(readFileSync(out, "utf8")).qaId);
  console.log("seeded", dir);
}
const creds = JSON.parse(readFileSync(out, "utf8"));
const rss = (pid: number) => { const s = readFileSync(`/proc/${pid}/status`, "utf8"); const kb = (k: string) => Number(new RegExp(`^${k}:\\s+(\\d+) kB`, "m").exec(s)?.[1]) / 1024; return `RSS ${kb("VmRSS").toFixed(0)} MB, peak ${kb("VmHWM").toFixed(0)} MB`; };
const cpu = (pid: number) => { const f = readFileSync(`/proc/${pid}/stat`, "utf8").split(") ")[1]!.split(" "); return (Number(f[11]) + Number(f[12])) * 10; };
const p = spawn(process.execPath, ["--import", "tsx", "app/cli/serve.ts", `${process.env.RR_BUILD_DIR ?? "build"}/server/index.js`], { env, stdio: ["ignore", "ignore", "inherit"] });
const t0 = performance.now();
for (;;) { try { if ((await fetch("http://127.0.0.1:39123/healthz")).ok) break; } catch {} await new Promise((r) => setTimeout(r, 50)); }
console.log(`listening after ${(performance.now() - t0).toFixed(0)} ms; CPU ${cpu(p.pid!)} ms; ${rss(p.pid!)}`);
const url = `http://127.0.0.1:39123/api/sensors/bench-sensor/report`;
for (const [who, tok] of [["admin", creds.adminToken], ["admin", creds.adminToken], ["member", creds.qaToken], ["member", creds.qaToken]]) {
  const c = cpu(p.pid!); const t = performance.now();
  const r = await fetch(url, { headers: { Authorization: `Bearer ${tok}` } }); await r.arrayBuffer();
  console.log(`${who} ${r.status} ${(performance.now() - t).toFixed(0)} ms wall, CPU ${cpu(p.pid!) - c} ms; ${rss(p.pid!)}`);
}
p.kill("SIGTERM");
