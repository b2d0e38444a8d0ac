// Bench of sync throughput past one machine (issue 17): 5,000 shots (10 requests × 500) through
// POST /api/sync of the BUILT app over HTTP, on
//   - one instance on a single SQLite file (the embedded default),
//   - the cluster of `npm run cluster`: app A on the sqld primary, app B on its replica
//     (which forwards every write to the primary), and A and B at once (5 requests each).
// Slow (it builds nothing but starts sqld, s3rver and three app servers): only with
// BENCH_CLUSTER=1, e.g. `BENCH_CLUSTER=1 npm run bench -- cluster`. Prints, never asserts.
import { spawn } from "node:child_process";
import { randomBytes } from "node:crypto";
import { existsSync, mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join, resolve } from "node:path";
import { freePort } from "../support/ports";

const SHOTS = 5_000;
const PER_REQUEST = 500;

const fmt = (n: number, d = 0) => n.toLocaleString("en-GB", { maximumFractionDigits: d, minimumFractionDigits: d });

function batches(n: number, tag: string, sensorId: string, siteId: string) {
  const out = [];
  for (let b = 0; b < n / PER_REQUEST; b++) {
    const sessionId = crypto.randomUUID();
    out.push({
      deviceId: `bench-${tag}`,
      sessions: [{ id: sessionId, sensorId, siteId, startedAt: "2026-07-01T09:00:00+02:00", airTempC: 16, pressureHpa: 1008, humidityPct: 70 }],
      shots: Array.from({ length: PER_REQUEST - 1 }, (_, i) => {
        const d = 5 + (i % 40);
        return {
          id: crypto.randomUUID(),
          sessionId,
          takenAt: `2026-07-01T${String(9 + Math.floor(i / 60)).padStart(2, "0")}:${String(i % 60).padStart(2, "0")}:00+02:00`,
          reference: { method: "edm", distanceM: d },
          readings: { rangesM: [d + 0.002, d + 0.003, d + 0.001] },
          reflectancePct: [10, 50, 90][i % 3],
          illuminanceKlux: 30,
        };
      }),
    });
  }
  return out;
}

async function send(base: string, token: string, list: ReturnType<typeof batches>) {
  let shots = 0;
  for (const body of list) {
    for (;;) {
      const res = await fetch(`${base}/api/sync`, { method: "POST", headers: { Authorization: `Bearer ${token}`, "Content-Type": "application/json" }, body: JSON.stringify(body) });
      if (res.status === 503) {
        await new Promise((r) => setTimeout(r, Number(res.headers.get("Retry-After") ?? 1) * 1000));
        continue;
      }
      if (res.status !== 200) throw new Error(`sync answered ${res.status}: ${await res.text()}`);
      const j = (await res.json()) as { results: { status: string }[] };
      shots += j.results.filter((r) => r.status === "accepted").length;
      break;
    }
  }
  return shots;
}

async function timed(f: () => Promise<number>) {
  const t = performance.now();
  const n = await f();
  const ms = performance.now() - t;
  return { n, ms, rate: (n / ms) * 1000 };
}

export async function run(): Promise<string[]> {
  if (process.env.BENCH_CLUSTER !== "1") return ["cluster: skipped (set BENCH_CLUSTER=1; needs `npm run build` and fetches sqld on first use)"];
  const serverEntry = resolve(process.env.RR_BUILD_DIR ?? "build", "server/index.js");
  if (!existsSync(serverEntry)) return [`cluster: no build at ${serverEntry} (npm run build first)`];
  const lines: string[] = [];
  const { DEMO_IDS } = await import("../../app/seed/scenario.ts");

  // 1. one instance on one file: migrated and seeded in this process, then served
  const dir = mkdtempSync(join(tmpdir(), "shotbook-bench-cluster-"));
  process.env.DATABASE_URL = `file:${join(dir, "single.db")}`;
  process.env.DATA_DIR = dir;
  const { resetEnvCache } = await import("../../app/env.server.ts");
  const { getDb, resetDb } = await import("../../app/db/client.server.ts");
  resetEnvCache();
  resetDb();
  const { migrateDb } = await import("../../app/db/migrate.server.ts");
  const { seedDemo } = await import("../../app/seed/seed.server.ts");
  const { createTokenFor } = await import("../../app/models/tokens.server.ts");
  await migrateDb(getDb());
  const seeded = await seedDemo();
  const crew = seeded.users.find((u) => u.role === "crew")!;
  const singleToken = (await createTokenFor(null, crew.id, "bench"))!.token;
  resetDb();
  const port = await freePort();
  const app = spawn(process.execPath, ["--import", "tsx", resolve("app/cli/serve.ts"), serverEntry], {
    env: {
      ...process.env,
      HOST: "127.0.0.1",
      PORT: String(port),
      NODE_ENV: "production",
      SESSION_SECRET: randomBytes(48).toString("base64"),
      COOKIE_SECURE: "false",
      DATA_DIR: dir,
      MAIL_DIR: join(dir, "mail"),
      SMTP_URL: "smtp://127.0.0.1:9",
    },
    stdio: "ignore",
  });
  const { startCluster } = await import("../cluster/start.ts");
  let cluster: Awaited<ReturnType<typeof startCluster>> | undefined;
  try {
    const base = `http://127.0.0.1:${port}`;
    for (let i = 0; ; i++) {
      try {
        if ((await fetch(`${base}/healthz`)).ok) break;
      } catch {}
      if (i > 200) throw new Error("the single-file app did not start");
      await new Promise((r) => setTimeout(r, 150));
    }
    const single = await timed(() => send(base, singleToken, batches(SHOTS, "single", DEMO_IDS.roof, DEMO_IDS.yard)));
    lines.push(`cluster bench: ${fmt(SHOTS)} records (10 sessions, 4,990 shots; ${SHOTS / PER_REQUEST} × ${PER_REQUEST} records) through POST /api/sync over HTTP, built app`);
    lines.push(`  single file (one instance, file:)        ${fmt(single.ms)} ms = ${fmt(single.rate)} records/s`);

    // 2. the cluster
    cluster = await startCluster();
    const [A, B] = cluster.apps.map((a) => a.url) as [string, string];
    const tok = cluster.tokens.crew;
    const onA = await timed(() => send(A, tok, batches(SHOTS, "a", DEMO_IDS.roof, DEMO_IDS.yard)));
    lines.push(`  cluster, app A on the sqld primary        ${fmt(onA.ms)} ms = ${fmt(onA.rate)} records/s`);
    const onB = await timed(() => send(B, tok, batches(SHOTS, "b", DEMO_IDS.roof, DEMO_IDS.yard)));
    lines.push(`  cluster, app B on the replica (forwards)  ${fmt(onB.ms)} ms = ${fmt(onB.rate)} records/s`);
    const both = await timed(async () => {
      const [x, y] = await Promise.all([send(A, tok, batches(SHOTS / 2, "ab-a", DEMO_IDS.roof, DEMO_IDS.yard)), send(B, tok, batches(SHOTS / 2, "ab-b", DEMO_IDS.tripod, DEMO_IDS.yard))]);
      return x + y;
    });
    lines.push(`  cluster, A and B at once (5 requests each) ${fmt(both.ms)} ms = ${fmt(both.rate)} records/s`);
  } finally {
    app.kill("SIGTERM");
    await cluster?.stop();
    rmSync(dir, { recursive: true, force: true });
  }
  return lines;
}

if (import.meta.url === `file://${process.argv[1]}`) {
  for (const l of await run()) console.log(l);
  process.exit(0);
}
