// Bench of the server side of sync and reports, on a temporary database file:
// 1. 5,000 shots through the real POST /api/sync action (10 requests × 500: auth, JSON, zod,
//    recomputation with app/domain, duplicate checks, insert, the failed-verdict notice)
//    against the same 5,000 rows inserted raw with the libSQL client in one transaction
//    (multi-row INSERTs); BENCH_INGEST_RUNS (3) runs of both from fresh copies, medians.
// 2. GET /api/sensors/:id/report over 100,000 stored shots: COLD (nothing kept in this process,
//    as after a start or on another instance), WARM (the same figures asked again), and after
//    an exclusion (the kept rows patched, the report computed again).
// Targets: ingest ≥ 25 % of the raw insert rate; report < 300 ms for a repeated view (WARM;
// COLD, the first view after a start, is printed beside it). Prints, never asserts.
// Run alone: npx tsx tests/bench/server.bench.ts
import { copyFileSync, mkdtempSync, rmSync } from "node:fs";
import { loadavg, tmpdir } from "node:os";
import { join } from "node:path";
import { pathToFileURL } from "node:url";

const SHOTS = 5_000;
const PER_REQUEST = 500;
const SESSIONS = 10;
const REPORT_SHOTS = 100_000;
const REPORT_RUNS = 7;
const INGEST_RUNS = Number(process.env.BENCH_INGEST_RUNS ?? 3);

/** mulberry32: small deterministic PRNG. */
function prng(seed: number) {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** CPU time of this process (user + system, ms): steadier than wall time on a busy machine. */
const cpuMs = () => {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1000;
};

const fmt = (n: number, d = 0) => n.toLocaleString("en-GB", { maximumFractionDigits: d, minimumFractionDigits: d });

export async function run(): Promise<string[]> {
  const dir = mkdtempSync(join(tmpdir(), "shotbook-bench-"));
  const saved = { DATABASE_URL: process.env.DATABASE_URL, DATA_DIR: process.env.DATA_DIR };
  process.env.DATABASE_URL = `file:${join(dir, "bench.db")}`;
  process.env.DATA_DIR = dir;
  const { resetEnvCache } = await import("../../app/env.server.ts");
  const { getDb, resetDb, prepareConnection } = await import("../../app/db/client.server.ts");
  resetEnvCache();
  resetDb();
  const lines: string[] = [];
  try {
    const db = getDb();
    await prepareConnection(db);
    const { migrateDb } = await import("../../app/db/migrate.server.ts");
    await migrateDb(db);
    const fx = await import("../support/registry-fixtures.ts");
    const { action } = await import("../../app/routes/api.sync.ts");
    const { loader: reportLoader } = await import("../../app/routes/api.sensors.$sensorId.report.ts");

    const crew = await fx.makeUser("crew");
    const sensor = await fx.makeSensor({ label: "Bench roof scanner", appliesAirCorrection: false, assumedRefractivity: 281.3 });
    const site = await fx.makeSite({ targets: [{ reflectancePct: 10 }, { reflectancePct: 50 }, { reflectancePct: 85 }, { reflectancePct: 90, retro: true }] });
    const project = await fx.shareProject([sensor], [site], [crew]); // issue 14
    const tape = await fx.makeTape();

    // ---- the 5,000 shots, as tablets would send them ----
    const rnd = prng(7);
    const gauss = () => Math.sqrt(-2 * Math.log(1 - rnd())) * Math.cos(2 * Math.PI * rnd());
    const sessions = Array.from({ length: SESSIONS }, (_, i) => ({
      id: crypto.randomUUID(),
      sensorId: sensor.id,
      siteId: site.id,
      startedAt: `2026-05-${String(4 + i).padStart(2, "0")}T08:00:00+02:00`,
      airTempC: 12 + i,
      pressureHpa: 1000 + i,
      humidityPct: 60,
    }));
    const shots = Array.from({ length: SHOTS }, (_, i) => {
      const s = sessions[i % SESSIONS]!;
      const D = 2 + rnd() * 150;
      const e = (1.5 + 2 * gauss()) / 1000;
      const kind = i % 5;
      const reference =
        kind === 4 ? { method: "tape", distanceM: Math.min(D, 30), tape: { tapeId: tape.id, tempC: 18, tensionN: 50, support: "ground" } } : { method: "edm", distanceM: D };
      const d = reference.distanceM;
      const readings = kind === 3 ? { roundTripNs: [((d + e) * 2 * 1.00027 * 1e9) / 299_792_458] } : { rangesM: [d + e, d + e + 0.0004, d + e - 0.0003] };
      return {
        id: crypto.randomUUID(),
        sessionId: s.id,
        takenAt: `${s.startedAt.slice(0, 10)}T${String(9 + Math.floor(i / 600)).padStart(2, "0")}:${String(Math.floor(i / 10) % 60).padStart(2, "0")}:${String(i % 60).padStart(2, "0")}+02:00`,
        targetId: site.targets[i % 4]!.id,
        reference,
        readings,
        reflectancePct: [10, 50, 85, 90][i % 4],
        illuminanceKlux: Math.round(rnd() * 100),
        position: { lat: 47 + rnd() * 0.01, lon: 8 + rnd() * 0.01, accuracyM: 3 },
      };
    });
    const bodies = Array.from({ length: SHOTS / PER_REQUEST }, (_, r) =>
      JSON.stringify({ deviceId: "bench-tablet", sessions: r === 0 ? sessions : [], shots: shots.slice(r * PER_REQUEST, (r + 1) * PER_REQUEST) }),
    );

    // Every run starts from the same point: a copy of this file as it is now, for the action
    // and for the raw insert alike (fresh handle, nothing kept in this process between runs).
    await db.$client.execute("PRAGMA wal_checkpoint(TRUNCATE)");
    copyFileSync(join(dir, "bench.db"), join(dir, "start.db"));
    const freshCopy = (name: string) => {
      copyFileSync(join(dir, "start.db"), join(dir, name));
      return `file:${join(dir, name)}`;
    };
    const { createClient } = await import("@libsql/client");
    const multiRow = (table: string, columns: string[], values: never[][], chunk: number) => {
      const out: { sql: string; args: never[] }[] = [];
      const one = `(${columns.map(() => "?").join(",")})`;
      for (let i = 0; i < values.length; i += chunk) {
        const part = values.slice(i, i + chunk);
        out.push({ sql: `INSERT INTO ${table} (${columns.map((c) => `"${c}"`).join(",")}) VALUES ${part.map(() => one).join(",")}`, args: part.flat() });
      }
      return out;
    };
    const runs: { ingestMs: number; ingestCpu: number; rawMs: number; rawCpu: number }[] = [];
    let cols: string[] = [];
    for (let rep = 0; rep < INGEST_RUNS; rep++) {
      // ---- 1a. through the real action ----
      process.env.DATABASE_URL = freshCopy(`ingest-${rep}.db`);
      resetEnvCache();
      resetDb();
      await prepareConnection(getDb());
      const t0 = performance.now();
      const c0 = cpuMs();
      let accepted = 0;
      for (const body of bodies) {
        const req = new Request("http://localhost/api/sync", {
          method: "POST",
          headers: { Authorization: `Bearer ${crew.token}`, "Content-Type": "application/json" },
          body,
        });
        const res = (await action({ request: req, params: {}, context: {} } as never)) as Response;
        const json = (await res.json()) as { results: { kind: string; status: string }[] };
        accepted += json.results.filter((x) => x.kind === "shot" && x.status === "accepted").length;
      }
      const ingestMs = performance.now() - t0;
      const ingestCpu = cpuMs() - c0;
      if (accepted !== SHOTS) throw new Error(`bench: only ${accepted} of ${SHOTS} shots were accepted`);

      // ---- 1b. the same rows, raw, one transaction, into another copy ----
      const rs = await getDb().$client.execute("SELECT * FROM shots");
      cols = rs.columns;
      const rows = rs.rows.map((r) => cols.map((c) => r[c] as never));
      const sessionRows = await getDb().$client.execute("SELECT * FROM check_sessions");
      const raw = createClient({ url: freshCopy(`raw-${rep}.db`) });
      await raw.execute("PRAGMA journal_mode = WAL");
      await raw.batch(multiRow("check_sessions", sessionRows.columns, sessionRows.rows.map((r) => sessionRows.columns.map((c) => r[c] as never)), 100), "write");
      const stmts = multiRow("shots", cols, rows, 250);
      const t1 = performance.now();
      const c1 = cpuMs();
      await raw.batch(stmts, "write");
      const rawMs = performance.now() - t1;
      const rawCpu = cpuMs() - c1;
      raw.close();
      runs.push({ ingestMs, ingestCpu, rawMs, rawCpu });
    }
    const med = (k: keyof (typeof runs)[number]) => runs.map((r) => r[k]).sort((a, b) => a - b)[runs.length >> 1]!;
    const [ingestMs, ingestCpu, rawMs, rawCpu] = [med("ingestMs"), med("ingestCpu"), med("rawMs"), med("rawCpu")];
    const ingestRate = SHOTS / (ingestMs / 1000);
    const rawRate = SHOTS / (rawMs / 1000);
    const each = runs.map((r) => `${fmt((100 * r.rawMs) / r.ingestMs, 1)} %`).join(", ");
    lines.push(`server: load average ${loadavg().map((x) => x.toFixed(1)).join(" ")} (wall times suffer on a busy machine; CPU times less so)`);
    lines.push(`server: medians of ${INGEST_RUNS} runs, each from a fresh copy of the same starting file:`);
    lines.push(`server: ingest of ${fmt(SHOTS)} shots through POST /api/sync (${SHOTS / PER_REQUEST} × ${PER_REQUEST}; auth, JSON, zod, recompute, insert, verdict notice): ${fmt(ingestMs, 1)} ms = ${fmt(ingestRate)} shots/s (CPU ${fmt(ingestCpu, 1)} ms)`);
    lines.push(`server: raw libSQL insert of the same ${fmt(SHOTS)} rows (one transaction, multi-row INSERTs): ${fmt(rawMs, 1)} ms = ${fmt(rawRate)} shots/s (CPU ${fmt(rawCpu, 1)} ms)`);
    lines.push(`server: ingest rate = ${fmt((100 * ingestRate) / rawRate, 1)} % of the raw insert rate by wall time (runs: ${each}), ${fmt((100 * rawCpu) / ingestCpu, 1)} % by CPU time (target ≥ 25 %)`);
    const client = getDb().$client;

    // ---- 2. report over 100,000 shots: the 5,000 copied 20× with new ids ----
    const copies = REPORT_SHOTS / SHOTS;
    const others = cols.filter((c) => c !== "id");
    await client.execute(
      `WITH RECURSIVE k(n) AS (SELECT 1 UNION ALL SELECT n + 1 FROM k WHERE n < ${copies - 1})
       INSERT INTO shots ("id", ${others.map((c) => `"${c}"`).join(",")})
       SELECT shots.id || '-' || k.n, ${others.map((c) => `shots."${c}"`).join(",")} FROM shots, k`,
    );
    // the bulk copy leaves a 100 MB write-ahead log; a running server would have checkpointed it
    await client.execute("PRAGMA wal_checkpoint(TRUNCATE)");
    const n = Number((await client.execute("SELECT count(*) AS n FROM shots WHERE sensor_id = ?", [sensor.id])).rows[0]!.n);
    const { clearReportCache } = await import("../../app/models/reports.server.ts");
    const { excludeShot } = await import("../../app/models/exclusions.server.ts");
    const qa = await fx.makeUser("qa");
    await fx.addMembers(project.id, [qa]);
    const get = async () => {
      const req = new Request(`http://localhost/api/sensors/${sensor.id}/report`, { headers: { Authorization: `Bearer ${crew.token}` } });
      const t = performance.now();
      const c = cpuMs();
      const res = (await reportLoader({ request: req, params: { sensorId: sensor.id }, context: {} } as never)) as Response;
      const bytes = await res.arrayBuffer(); // the endpoint's work ends with its bytes; parsing them is the client's
      return { ms: performance.now() - t, cpu: cpuMs() - c, bytes };
    };
    const series = async (before: () => Promise<unknown> | void) => {
      const ms: number[] = [];
      const cpu: number[] = [];
      let last: ArrayBuffer | null = null;
      for (let i = 0; i < REPORT_RUNS; i++) {
        await before();
        const r = await get();
        ms.push(r.ms);
        cpu.push(r.cpu);
        last = r.bytes;
      }
      ms.sort((a, b) => a - b);
      cpu.sort((a, b) => a - b);
      return { ms, cpu, json: JSON.parse(new TextDecoder().decode(last!)) as { n: number; excluded: number } };
    };
    const line = (what: string, s: { ms: number[]; cpu: number[] }) =>
      `median ${fmt(s.ms[REPORT_RUNS >> 1]!, 1)} ms, min ${fmt(s.ms[0]!, 1)}, max ${fmt(s.ms[REPORT_RUNS - 1]!, 1)} of ${REPORT_RUNS}; CPU median ${fmt(s.cpu[REPORT_RUNS >> 1]!, 1)} ms ${what}`;
    // COLD: this process keeps nothing (as after a restart, or on another app instance)
    const cold = await series(() => clearReportCache());
    // WARM: the same figures asked again; each request still reads the fingerprint
    const warm = await series(() => {});
    // AFTER AN EXCLUSION: each run excludes one more shot, then asks (the kept rows are patched)
    const ids = (await client.execute({ sql: "SELECT id FROM shots WHERE sensor_id = ? LIMIT ?", args: [sensor.id, REPORT_RUNS] })).rows.map((r) => String(r.id));
    let k = 0;
    const excl = await series(async () => {
      await excludeShot(qa, ids[k++]!, { reason: "bench: board knocked over" });
    });
    if (cold.json.n !== n || warm.json.n !== n || excl.json.excluded !== REPORT_RUNS) throw new Error("bench: the report does not cover the stored shots");
    lines.push(`server: GET /api/sensors/:id/report over ${fmt(n)} stored shots:`);
    lines.push(`server:   COLD (cache empty)        ${line("", cold)}`);
    lines.push(`server:   WARM (same figures again) ${line("(the < 300 ms target is judged on this: repeated views)", warm)}`);
    lines.push(`server:   after an exclusion        ${line("(kept rows patched, report recomputed)", excl)}`);
  } finally {
    resetDb();
    for (const [k, v] of Object.entries(saved)) {
      if (v === undefined) delete process.env[k];
      else process.env[k] = v;
    }
    resetEnvCache();
    rmSync(dir, { recursive: true, force: true });
  }
  return lines;
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  run().then(
    (lines) => {
      for (const l of lines) console.log(l);
    },
    (e) => {
      console.error(e);
      process.exitCode = 1;
    },
  );
}
