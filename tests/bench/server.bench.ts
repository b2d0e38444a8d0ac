// Bench of the server while crews sync (issue 16), over HTTP against the BUILT server started
// as `npm start` starts it (app/cli/serve.ts, NODE_ENV=production, so POST /api/sync runs its CPU
// stages on the sync worker pool), on a temporary database file:
// 1. INGEST: 5,000 shots (10 × 500) from one client, three runs, then 6 clients at once; beside
//    each run its rows inserted raw with the libSQL client into a copy of the starting file that
//    holds what was stored before that run (one transaction, multi-row INSERTs; the median of
//    three). Target: ingest ≥ 40 % of the raw insert rate in the median run. Beside the
//    wall-clock ratio, the same ratio in CPU time (the server's, every thread).
// 2. UNDER LOAD: a sensor with BENCH_LOAD_BASE (20,000) stored shots; 6 clients sync 500-shot
//    batches into it back to back for BENCH_LOAD_SECONDS (15 s) while one prober asks /healthz
//    every 50 ms and another asks the sensor's report again and again. Targets: /healthz
//    p99 < 250 ms, repeated report p95 < 1 s, and the longest the event loop was held < 50 ms
//    (node:perf_hooks monitorEventLoopDelay inside the server, read with SIGUSR2: serve.ts
//    SHOTBOOK_LOOP_STATS=1).
// Prints, never asserts. Needs `npm run build`. Run alone: npx tsx tests/bench/server.bench.ts
import { spawn, type ChildProcess } from "node:child_process";
import { randomBytes } from "node:crypto";
import { copyFileSync, existsSync, mkdtempSync, readFileSync, rmSync } from "node:fs";
import { loadavg, tmpdir } from "node:os";
import { join, resolve } from "node:path";
import { pathToFileURL } from "node:url";
import { fmt, quantile, target } from "./targets.ts";
import { freePort } from "../support/ports.ts";
import { createRng } from "../../app/seed/builders.ts";

const seededUniform = (seed: number) => createRng(seed).next;

const ROOT = resolve(import.meta.dirname, "../..");
const PER_REQUEST = 500;
const INGEST_BATCHES = 10;
const CLIENTS = 6;
const LOAD_BASE = Number(process.env.BENCH_LOAD_BASE ?? 20_000);
const LOAD_SECONDS = Number(process.env.BENCH_LOAD_SECONDS ?? 15);

export type World = { sensorId: string; siteId: string; targetIds: string[]; tapeId: string };

/** One tablet's batch: a new session and 499 shots of mixed references and readings, as the field sends them. */
export function makeBatch(w: World, rnd: () => number, device: string) {
  const gauss = () => Math.sqrt(-2 * Math.log(1 - rnd())) * Math.cos(2 * Math.PI * rnd());
  const session = { id: crypto.randomUUID(), sensorId: w.sensorId, siteId: w.siteId, startedAt: "2026-05-04T08:00:00+02:00", airTempC: 14, pressureHpa: 1004, humidityPct: 60 };
  const shots = Array.from({ length: PER_REQUEST - 1 }, (_, i) => {
    const D = 2 + rnd() * 150;
    const e = (1.5 + 2 * gauss()) / 1000;
    const kind = i % 5;
    const reference = kind === 4 ? { method: "tape", distanceM: Math.min(D, 30), tape: { tapeId: w.tapeId, tempC: 18, tensionN: 50, support: "ground" } } : { method: "edm", distanceM: D };
    const d = reference.distanceM;
    const readings = kind === 3 ? { roundTripNs: [((d + e) * 2 * 1.00027 * 1e9) / 299_792_458] } : { rangesM: [d + e, d + e + 0.0004, d + e - 0.0003] };
    return {
      id: crypto.randomUUID(),
      sessionId: session.id,
      takenAt: `2026-05-04T${String(9 + Math.floor(i / 60)).padStart(2, "0")}:${String(i % 60).padStart(2, "0")}:00+02:00`,
      targetId: w.targetIds[i % w.targetIds.length],
      reference,
      readings,
      reflectancePct: [10, 50, 85, 90][i % 4],
      illuminanceKlux: Math.round(rnd() * 100),
      position: { lat: 47 + rnd() * 0.01, lon: 8 + rnd() * 0.01, accuracyM: 3 },
    };
  });
  return JSON.stringify({ deviceId: device, sessions: [session], shots });
}

let warnedRefusal = false;

async function post(base: string, token: string, body: string) {
  for (;;) {
    const ask = () => fetch(`${base}/api/sync`, { method: "POST", headers: { Authorization: `Bearer ${token}`, "Content-Type": "application/json" }, body });
    const res = await ask().catch(ask);
    if (res.status === 503) {
      await res.arrayBuffer();
      await new Promise((r) => setTimeout(r, Number(res.headers.get("Retry-After") ?? 1) * 1000));
      continue;
    }
    if (res.status !== 200) throw new Error(`sync answered ${res.status}: ${(await res.text()).slice(0, 300)}`);
    const j = (await res.json()) as { results: { kind: string; status: string; errors?: unknown }[] };
    const refused = j.results.find((r) => r.status === "rejected");
    if (refused && !warnedRefusal) {
      warnedRefusal = true;
      console.error(`bench: the server refused a record: ${JSON.stringify(refused).slice(0, 300)}`);
    }
    return j.results.filter((r) => r.kind === "shot" && r.status === "accepted").length;
  }
}

/** CPU time (user + system, every thread) of a process so far, from /proc (Linux); NaN elsewhere. */
function serverCpuMs(pid: number | undefined): number {
  try {
    const stat = readFileSync(`/proc/${pid}/stat`, "utf8");
    // the fields after the command's closing parenthesis: utime and stime are the 12th and 13th
    const f = stat.slice(stat.lastIndexOf(")") + 2).split(" ");
    return ((Number(f[11]) + Number(f[12])) * 1000) / CLOCK_TICKS;
  } catch {
    return NaN;
  }
}
/** USER_HZ: 100 on Linux for every architecture Node runs on (sysconf(_SC_CLK_TCK); from memory). */
const CLOCK_TICKS = 100;

/** The built server as `npm start` runs it, with its event-loop gauge on; its stdout is read for the gauge's lines. */
async function startServer(buildDir: string, env: NodeJS.ProcessEnv) {
  const port = await freePort();
  // BENCH_SERVER_PROF=<dir>: the server writes a CPU profile of each of its threads there on exit (node --cpu-prof)
  const prof = process.env.BENCH_SERVER_PROF ? ["--cpu-prof", "--cpu-prof-dir", process.env.BENCH_SERVER_PROF] : [];
  // BENCH_NODE_FLAGS="--flag …": Node flags for the server, for trials (decision 0011 lists some tried)
  const extra = (process.env.BENCH_NODE_FLAGS ?? "").split(" ").filter(Boolean);
  const child: ChildProcess = spawn(process.execPath, [...extra, ...prof, "--import", "tsx", "app/cli/serve.ts", join(buildDir, "server/index.js")], {
    cwd: ROOT,
    // (and the sync workers, which --cpu-prof does not reach, write theirs every 5 s: sync.worker.ts)
    env: { ...env, PORT: String(port), HOST: "127.0.0.1", APP_URL: `http://127.0.0.1:${port}`, SHOTBOOK_LOOP_STATS: "1", SHOTBOOK_WORKER_PROF: process.env.BENCH_SERVER_PROF ?? "" },
    stdio: ["ignore", "pipe", "pipe"],
  });
  const loopLines: string[] = [];
  let out = "";
  child.stdout!.on("data", (d: Buffer) => {
    out += d.toString();
    let i;
    while ((i = out.indexOf("\n")) >= 0) {
      const line = out.slice(0, i);
      out = out.slice(i + 1);
      if (line.startsWith("[loop] ")) loopLines.push(line.slice(7));
      if (line.startsWith("[slow] ")) console.error(line);
    }
  });
  let err = "";
  child.stderr!.on("data", (d: Buffer) => (err = (err + d.toString()).slice(-4000)));
  const base = `http://127.0.0.1:${port}`;
  for (const deadline = Date.now() + 60_000; ;) {
    try {
      if ((await fetch(`${base}/healthz`)).ok) break;
    } catch {}
    if (child.exitCode !== null || Date.now() > deadline) throw new Error(`the built server did not start: ${err}`);
    await new Promise((r) => setTimeout(r, 200));
  }
  /** The event-loop delay since the last call (the server prints it on SIGUSR2). */
  const loop = async () => {
    const n = loopLines.length;
    child.kill("SIGUSR2");
    for (let i = 0; i < 100 && loopLines.length === n; i++) await new Promise((r) => setTimeout(r, 50));
    return JSON.parse(loopLines[n] ?? "null") as { maxMs: number; p99Ms: number; p50Ms: number; meanMs: number; samples: number } | null;
  };
  return { base, child, loop, stderr: () => err };
}

export async function run(): Promise<string[]> {
  const buildDir = resolve(ROOT, process.env.RR_BUILD_DIR ?? "build");
  if (!existsSync(join(buildDir, "server/index.js"))) return [`  no build at ${buildDir} (npm run build first)`];
  const dir = mkdtempSync(join(tmpdir(), "shotbook-bench-"));
  const saved = { ...process.env };
  Object.assign(process.env, {
    DATABASE_URL: `file:${join(dir, "bench.db")}`,
    DATA_DIR: dir,
    MAIL_DIR: join(dir, "mail"),
    SESSION_SECRET: randomBytes(48).toString("base64"),
    COOKIE_SECURE: "false",
    NODE_ENV: "production",
  });
  const { resetEnvCache } = await import("../../app/env.server.ts");
  const { getDb, resetDb, prepareConnection } = await import("../../app/db/client.server.ts");
  resetEnvCache();
  resetDb();
  const lines: string[] = [
    `  load average ${loadavg()
      .map((x) => x.toFixed(1))
      .join(" / ")} on ${(await import("node:os")).availableParallelism()} cores (wall times suffer on a busy machine)`,
  ];
  let server: Awaited<ReturnType<typeof startServer>> | undefined;
  try {
    const db = getDb();
    await prepareConnection(db);
    const { migrateDb } = await import("../../app/db/migrate.server.ts");
    await migrateDb(db);
    const fx = await import("../support/registry-fixtures.ts");
    const crew = await fx.makeUser("crew");
    const sensor = await fx.makeSensor({ label: "Bench roof scanner" });
    const loadSensor = await fx.makeSensor({ label: "Bench tripod scanner" });
    const site = await fx.makeSite({ targets: [{ reflectancePct: 10 }, { reflectancePct: 50 }, { reflectancePct: 85 }, { reflectancePct: 90, retro: true }] });
    const tape = await fx.makeTape();
    await fx.shareProject([sensor, loadSensor], [site], [crew], { tapeIds: [tape.id] }); // issue 14 (its tape too, or taped shots are refused)
    const w: World = { sensorId: sensor.id, siteId: site.id, targetIds: site.targets.map((t: { id: string }) => t.id), tapeId: tape.id };
    const rnd = seededUniform(7);
    await db.$client.execute("PRAGMA wal_checkpoint(TRUNCATE)");
    copyFileSync(join(dir, "bench.db"), join(dir, "start.db"));
    resetDb();

    server = await startServer(buildDir, process.env);
    const { base } = server;

    // ---- 1. ingest: one client, then six at once; raw inserts of the same rows beside it ----
    const one = Array.from({ length: INGEST_BATCHES }, () => makeBatch(w, rnd, "bench-one"));
    const warm = makeBatch({ ...w }, rnd, "bench-warm");
    await post(base, crew.token, warm); // a first batch warms the threads and the JIT
    // three runs of ten fresh batches: the median ratio is the figure (a single run of under a
    // second swung by ±4 points between runs on a quiet machine). Each run writes into a larger
    // table than the one before, and a 500-row batch costs more there (its random ids and errors
    // land on more index pages: 30 → 75 ms a batch from 0 to 30,000 rows, measured), so each run's
    // raw insert below starts from the same table as that run did.
    const runBodies: string[][] = [];
    const oneRuns: { ms: number; cpuMs: number; accepted: number }[] = [];
    for (let run = 0; run < 3; run++) {
      const bodies = run === 0 ? one : Array.from({ length: INGEST_BATCHES }, () => makeBatch(w, rnd, "bench-one"));
      runBodies.push(bodies);
      const cpu0 = serverCpuMs(server.child.pid);
      const t0 = performance.now();
      let n = 0;
      for (const body of bodies) n += await post(base, crew.token, body);
      oneRuns.push({ ms: performance.now() - t0, cpuMs: serverCpuMs(server.child.pid) - cpu0, accepted: n });
    }
    const six = Array.from({ length: CLIENTS }, (_, c) => Array.from({ length: 2 }, () => makeBatch(w, rnd, `bench-six-${c}`)));
    const t = performance.now();
    const sixAccepted = (
      await Promise.all(
        six.map(async (list) => {
          let n = 0;
          for (const b of list) n += await post(base, crew.token, b);
          return n;
        }),
      )
    ).reduce((a, b) => a + b, 0);
    const sixMs = performance.now() - t;

    // the raw inserts: the rows each run stored, read back in the order they were written
    const { createClient } = await import("@libsql/client");
    const reader = createClient({ url: process.env.DATABASE_URL! });
    const multiRow = (table: string, columns: string[], values: unknown[][], chunk: number) => {
      const out: { sql: string; args: never[] }[] = [];
      const oneRow = `(${columns.map(() => "?").join(",")})`;
      for (let i = 0; i < values.length; i += chunk) {
        const part = values.slice(i, i + chunk);
        out.push({ sql: `INSERT INTO ${table} (${columns.map((c) => `"${c}"`).join(",")}) VALUES ${part.map(() => oneRow).join(",")}`, args: part.flat() as never[] });
      }
      return out;
    };
    const rawStatementsOf = async (bodies: string[]) => {
      const ids = bodies.flatMap((b) => (JSON.parse(b) as { shots: { id: string }[] }).shots.map((s) => s.id));
      const sessionIds = bodies.map((b) => (JSON.parse(b) as { sessions: { id: string }[] }).sessions[0]!.id);
      const rs = await reader.execute({ sql: `SELECT * FROM shots WHERE id IN (SELECT value FROM json_each(?)) ORDER BY rowid`, args: [JSON.stringify(ids)] });
      const ss = await reader.execute({ sql: `SELECT * FROM check_sessions WHERE id IN (SELECT value FROM json_each(?)) ORDER BY rowid`, args: [JSON.stringify(sessionIds)] });
      const rowsOf = (r: typeof rs) => r.rows.map((row) => r.columns.map((c) => row[c]));
      return { ids, columns: rs.columns, shots: rs.rows.length, stmts: [...multiRow("check_sessions", ss.columns, rowsOf(ss), 100), ...multiRow("shots", rs.columns, rowsOf(rs), 250)] };
    };
    const warmRaw = await rawStatementsOf([warm]);
    const runRaw = await Promise.all(runBodies.map(rawStatementsOf));
    reader.close();
    for (let run = 0; run < 3; run++) {
      const accepted = oneRuns[run]!.accepted;
      if (runRaw[run]!.shots !== accepted || accepted !== INGEST_BATCHES * (PER_REQUEST - 1)) throw new Error(`bench: run ${run + 1}: ${accepted} shots accepted, ${runRaw[run]!.shots} stored`);
    }
    // run k's rows inserted raw, three times, each into a copy of the starting file that first
    // gets (untimed, then checkpointed) the rows stored before run k: the median is that run's
    // denominator (one raw run swung 2× on a busy machine)
    const rawOf = async (run: number) => {
      const runs: { ms: number; cpuMs: number }[] = [];
      for (let k = 0; k < 3; k++) {
        const file = join(dir, `raw${run}-${k}.db`);
        copyFileSync(join(dir, "start.db"), file);
        const raw = createClient({ url: `file:${file}` });
        await raw.execute("PRAGMA journal_mode = WAL");
        await raw.batch([...warmRaw.stmts, ...runRaw.slice(0, run).flatMap((r) => r.stmts)], "write");
        await raw.execute("PRAGMA wal_checkpoint(TRUNCATE)");
        const rawCpu0 = process.cpuUsage();
        const t0 = performance.now();
        await raw.batch(runRaw[run]!.stmts, "write");
        const ms = performance.now() - t0;
        const c = process.cpuUsage(rawCpu0);
        runs.push({ ms, cpuMs: (c.user + c.system) / 1000 });
        raw.close();
        rmSync(file, { force: true });
      }
      const med = (xs: number[]) =>
        quantile(
          [...xs].sort((a, b) => a - b),
          0.5,
        );
      return { ms: med(runs.map((r) => r.ms)), cpuMs: med(runs.map((r) => r.cpuMs)) };
    };
    const raws: { ms: number; cpuMs: number }[] = [];
    for (let run = 0; run < 3; run++) raws.push(await rawOf(run));
    // the same rows in the same number of each: the rate ratio is the time ratio
    const ratios = oneRuns.map((r, run) => raws[run]!.ms / r.ms);
    const cpuRatios = oneRuns.map((r, run) => raws[run]!.cpuMs / r.cpuMs);
    const mid = [...ratios.keys()].sort((a, b) => ratios[a]! - ratios[b]!)[1]!;
    const n1 = oneRuns[mid]!.accepted;
    const rateOne = n1 / (oneRuns[mid]!.ms / 1000);
    const rateRaw = n1 / (raws[mid]!.ms / 1000);
    const rateSix = sixAccepted / (sixMs / 1000);
    lines.push(`  ingest through POST /api/sync over HTTP (auth, JSON, zod, recompute, insert, verdict notice):`);
    lines.push(`    one client, ${INGEST_BATCHES} × ${PER_REQUEST}, three runs into a growing table: ${oneRuns.map((r) => fmt(r.ms)).join(", ")} ms`);
    lines.push(`    raw libSQL insert of each run's rows into the table as that run found it (one transaction, multi-row INSERTs; median of 3): ${raws.map((r) => fmt(r.ms)).join(", ")} ms`);
    lines.push(`    ingest / raw insert rate by run: ${ratios.map((x) => `${fmt(100 * x, 1)} %`).join(", ")}; the median run: ${fmt(rateOne)} against ${fmt(rateRaw)} shots/s`);
    lines.push(`    ${CLIENTS} clients at once, 2 × ${PER_REQUEST} each: ${fmt(sixAccepted)} shots in ${fmt(sixMs)} ms = ${fmt(rateSix)} shots/s`);
    // CPU time is what a busy machine distorts least: the server's (every thread, /proc) against the raw insert's (this process)
    if (cpuRatios.every(Number.isFinite))
      lines.push(
        `    CPU per 1,000 shots (the median run): ingest ${fmt((1000 * oneRuns[mid]!.cpuMs) / n1)} ms (server, all threads), raw insert ${fmt((1000 * raws[mid]!.cpuMs) / n1)} ms; the same ratio in CPU time by run: ${cpuRatios.map((x) => `${fmt(100 * x, 1)} %`).join(", ")}`,
      );
    lines.push(target("ingest rate ≥ 40 % of the raw insert rate (one client, the median run)", `${fmt(100 * ratios[mid]!, 1)} %`, ratios[mid]! >= 0.4));
    lines.push(`    (${CLIENTS} clients at once: ${fmt((100 * rateSix) / (n1 / (raws[2]!.ms / 1000)), 1)} % of the last run's raw rate)`);

    // ---- 2. under load ----
    // the load sensor gets LOAD_BASE stored shots: the rows just synced, copied with new ids
    const bulk = createClient({ url: process.env.DATABASE_URL! });
    const cols = runRaw[0]!.columns.filter((c) => c !== "id" && c !== "sensor_id");
    const copies = Math.ceil(LOAD_BASE / runRaw[0]!.shots);
    await bulk.execute({
      sql: `WITH RECURSIVE k(n) AS (SELECT 1 UNION ALL SELECT n + 1 FROM k WHERE n < ${copies})
       INSERT INTO shots ("id", "sensor_id", ${cols.map((c) => `"${c}"`).join(",")})
       SELECT shots.id || '-' || k.n, ?, ${cols.map((c) => `shots."${c}"`).join(",")} FROM shots, k WHERE shots.id IN (SELECT value FROM json_each(?)) LIMIT ${LOAD_BASE}`,
      args: [loadSensor.id, JSON.stringify(runRaw[0]!.ids)],
    });
    await bulk.execute("PRAGMA wal_checkpoint(TRUNCATE)");
    bulk.close();
    const reportUrl = `${base}/api/sensors/${loadSensor.id}/report`;
    const report = async () => {
      const t0 = performance.now();
      // a kept-alive connection the server closed while idle fails at once: ask again on a new one
      const ask = () => fetch(reportUrl, { headers: { Authorization: `Bearer ${crew.token}` } });
      const res = await ask().catch(ask);
      const bytes = (await res.arrayBuffer()).byteLength;
      if (res.status !== 200) throw new Error(`report answered ${res.status}`);
      return { ms: performance.now() - t0, bytes };
    };
    const first = await report(); // the first view after the bulk insert; the target is on repeated views
    await report();
    await server.loop(); // start the gauge afresh
    const lw: World = { ...w, sensorId: loadSensor.id };
    let stop = false;
    let loadShots = 0;
    let loadBatches = 0;
    const syncMs: number[] = [];
    const syncers = Array.from({ length: CLIENTS }, async (_, c) => {
      const r = seededUniform(100 + c);
      while (!stop) {
        const body = makeBatch(lw, r, `bench-load-${c}`);
        const t0 = performance.now();
        // (not `loadShots += await …`: that reads loadShots before the wait and loses the other clients' counts)
        const got = await post(base, crew.token, body);
        loadShots += got;
        syncMs.push(performance.now() - t0);
        loadBatches++;
      }
    });
    const health: number[] = [];
    const prober = (async () => {
      while (!stop) {
        const t0 = performance.now();
        const res = await fetch(`${base}/healthz`).catch(() => fetch(`${base}/healthz`));
        await res.arrayBuffer();
        health.push(performance.now() - t0);
        await new Promise((r) => setTimeout(r, 50));
      }
    })();
    const reports: number[] = [];
    let reportBytes = 0;
    const reader2 = (async () => {
      await new Promise((r) => setTimeout(r, 1000));
      // BENCH_LOAD_REPORT=0: no report reader, to see what the syncs alone do to the event loop
      while (!stop && process.env.BENCH_LOAD_REPORT !== "0") {
        const r = await report();
        reports.push(r.ms);
        reportBytes = r.bytes;
      }
    })();
    const t0 = performance.now();
    await new Promise((r) => setTimeout(r, LOAD_SECONDS * 1000));
    stop = true;
    await Promise.all([...syncers, prober, reader2]);
    const loadMs = performance.now() - t0;
    const gauge = await server.loop();
    const hs = [...health].sort((a, b) => a - b);
    const rp = [...reports].sort((a, b) => a - b);
    const sm = [...syncMs].sort((a, b) => a - b);
    lines.push(`  under load: ${CLIENTS} clients syncing ${PER_REQUEST}-shot batches back to back for ${fmt(loadMs / 1000, 1)} s into a sensor with ${fmt(LOAD_BASE)} stored shots`);
    lines.push(
      `    ${fmt(loadBatches)} batches, ${fmt(loadShots)} shots = ${fmt(loadShots / (loadMs / 1000))} shots/s; one batch's round trip median ${fmt(quantile(sm, 0.5))} ms, p95 ${fmt(quantile(sm, 0.95))} ms`,
    );
    lines.push(`    the report before the load: ${fmt(first.ms)} ms (first view after the bulk insert), ${fmt(first.bytes / 1024)} KB`);
    lines.push(
      target(
        "/healthz p99 < 250 ms while 6 clients sync",
        `p99 ${fmt(quantile(hs, 0.99))} ms (median ${fmt(quantile(hs, 0.5))}, max ${fmt(hs[hs.length - 1] ?? NaN)}, ${hs.length} probes)`,
        quantile(hs, 0.99) < 250,
      ),
    );
    lines.push(
      target(
        "repeated report p95 < 1 s while 6 clients sync",
        rp.length ? `p95 ${fmt(quantile(rp, 0.95))} ms (median ${fmt(quantile(rp, 0.5))}, ${rp.length} reports of ${fmt(reportBytes / 1024)} KB)` : "no report finished",
        rp.length > 0 && quantile(rp, 0.95) < 1000,
      ),
    );
    lines.push(
      target(
        "event loop never held > 50 ms while 6 clients sync",
        gauge ? `longest ${fmt(gauge.maxMs, 1)} ms (p99 ${fmt(gauge.p99Ms, 1)}, mean ${fmt(gauge.meanMs, 1)} ms; monitorEventLoopDelay inside the server)` : "no reading from the server",
        !!gauge && gauge.maxMs < 50,
      ),
    );
  } catch (e) {
    // what was measured before the failure, and the server's last words
    throw new Error(`${e instanceof Error ? e.message : String(e)}\n${lines.join("\n")}\nserver stderr: ${server?.stderr() ?? ""} (exit ${server?.child.exitCode})`);
  } finally {
    if (server && server.child.exitCode === null) {
      const gone = new Promise((r) => server!.child.once("exit", r));
      server.child.kill("SIGTERM");
      // a profiled server writes its profiles on the way out
      await Promise.race([gone, new Promise((r) => setTimeout(r, 15_000))]);
    }
    resetDb();
    for (const k of Object.keys(process.env)) if (!(k in saved)) delete process.env[k];
    Object.assign(process.env, saved);
    resetEnvCache();
    rmSync(dir, { recursive: true, force: true });
  }
  return lines;
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  run().then(
    (lines) => {
      for (const l of lines) console.log(l);
      process.exit(0);
    },
    (e) => {
      console.error(e);
      process.exit(1);
    },
  );
}
