// npm run cluster (= react-router build && tsx app/cli/cluster.ts [--port 3000] [--dir data/cluster])
// Shotbook past one machine, on this one: a libSQL server (sqld) primary and one replica on
// 127.0.0.1, the S3 fake (s3rver) as the shared object store, the demo migrated and seeded
// through the primary, two app instances (A on the primary, B on the replica, which serves
// reads and forwards writes), and the mail fake. Prints the URLs; Ctrl-C stops everything.
// --port 0 picks free ports for the two apps; --json also prints one machine-readable line
// (the cluster test reads it). Everything lives under --dir, emptied at start.
import { spawn, type ChildProcess } from "node:child_process";
import { randomBytes } from "node:crypto";
import { existsSync, mkdirSync, rmSync } from "node:fs";
import { createServer } from "node:net";
import { resolve } from "node:path";
import { ensureSqld } from "./sqld-binary";

type Args = { port: number; dir: string; json: boolean };

function parseArgs(argv: string[]): Args {
  const out: Args = { port: 3000, dir: "data/cluster", json: false };
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i]!;
    const [k, inline] = a.includes("=") ? [a.slice(0, a.indexOf("=")), a.slice(a.indexOf("=") + 1)] : [a, undefined];
    const value = () => inline ?? argv[++i];
    if (k === "--port") {
      const v = value();
      const n = Number(v);
      if (!Number.isInteger(n) || n < 0 || n > 65534) fail(`--port needs a whole number from 0 to 65534 (got ${v ?? "nothing"}); the second app takes the next port.`);
      out.port = n;
    } else if (k === "--dir") {
      const v = value();
      if (!v) fail("--dir needs a folder.");
      out.dir = v!;
    } else if (k === "--json") out.json = true;
    else fail(`Unknown option ${a}. Usage: npm run cluster [-- --port 3000] [--dir data/cluster] [--json]`);
  }
  return out;
}

function fail(message: string): never {
  console.error(message);
  process.exit(2);
}

async function freePort(): Promise<number> {
  return new Promise((res, rej) => {
    const s = createServer();
    s.once("error", rej);
    s.listen(0, "127.0.0.1", () => {
      const a = s.address();
      s.close(() => res(typeof a === "object" && a ? a.port : 0));
    });
  });
}

async function waitFor(what: string, url: string, ok: (r: Response) => Promise<boolean> | boolean = (r) => r.ok, ms = 30_000) {
  const deadline = Date.now() + ms;
  let last = "";
  for (;;) {
    if (stopping) await new Promise(() => {});
    try {
      const r = await fetch(url);
      if (await ok(r)) return;
      last = `HTTP ${r.status}`;
    } catch (e) {
      last = (e as Error).message;
    }
    if (Date.now() > deadline) throw new Error(`${what} did not answer ${url} within ${ms / 1000} s (${last}).`);
    await new Promise((r) => setTimeout(r, 150));
  }
}

const args = parseArgs(process.argv.slice(2));
const dir = resolve(args.dir);
const buildDir = process.env.RR_BUILD_DIR ?? "build";
const serverEntry = resolve(buildDir, "server/index.js");
if (!existsSync(serverEntry)) fail(`No build at ${serverEntry}: run \`npm run cluster\` (it builds first) or \`npx react-router build\`.`);

const children: { name: string; proc: ChildProcess }[] = [];
let stopping = false;
let s3: { close(): Promise<void> } | undefined;
let smtp: { close(): Promise<void> } | undefined;

function start(name: string, cmd: string, argv: string[], env: NodeJS.ProcessEnv, log: "inherit" | "ignore" = "ignore") {
  const proc = spawn(cmd, argv, { env, stdio: ["ignore", log, log === "inherit" ? "inherit" : "pipe"] });
  let errText = "";
  proc.stderr?.on("data", (d: Buffer) => {
    errText = (errText + d.toString()).slice(-2000);
  });
  proc.once("exit", (code, signal) => {
    if (stopping) return;
    // Ctrl-C in a terminal reaches the whole process group: the servers stop on their own
    if (signal === "SIGINT") {
      console.log("\nStopping the cluster…");
      void stop(0);
      return;
    }
    console.error(`${name} stopped (${signal ?? `exit code ${code}`}).${errText ? `\n${errText}` : ""}`);
    void stop(1);
  });
  children.push({ name, proc });
  return proc;
}

async function stop(code: number) {
  if (stopping) return;
  stopping = true;
  // apps first (they hold connections to the servers), then the replica, then the primary
  for (const { proc } of [...children].reverse()) {
    if (proc.exitCode !== null || proc.signalCode !== null) continue;
    proc.kill("SIGTERM");
    await new Promise((r) => {
      const t = setTimeout(() => {
        proc.kill("SIGKILL");
        r(null);
      }, 5000);
      proc.once("exit", () => {
        clearTimeout(t);
        r(null);
      });
    });
  }
  await s3?.close().catch(() => {});
  await smtp?.close().catch(() => {});
  process.exit(code);
}
process.on("SIGINT", () => {
  if (!stopping) console.log("\nStopping the cluster…");
  void stop(0);
});
process.on("SIGTERM", () => void stop(0));

try {
  rmSync(dir, { recursive: true, force: true });
  mkdirSync(dir, { recursive: true });
  const sqld = ensureSqld();
  const [httpP, grpcP, httpR, s3Port, smtpPort] = [await freePort(), await freePort(), await freePort(), await freePort(), await freePort()];
  const appPorts = args.port === 0 ? [await freePort(), await freePort()] : [args.port, args.port + 1];
  const primaryUrl = `http://127.0.0.1:${httpP}`;
  const replicaUrl = `http://127.0.0.1:${httpR}`;
  // the report's JSON of a large sensor passes through one response
  const common = ["--no-welcome", "--max-response-size", "100MB", "--max-total-response-size", "400MB"];
  start("sqld primary", sqld, [...common, "-d", resolve(dir, "primary.sqld"), "--http-listen-addr", `127.0.0.1:${httpP}`, "--grpc-listen-addr", `127.0.0.1:${grpcP}`], process.env);
  await waitFor("The sqld primary", `${primaryUrl}/health`);
  start("sqld replica", sqld, [...common, "-d", resolve(dir, "replica.sqld"), "--http-listen-addr", `127.0.0.1:${httpR}`, "--primary-grpc-url", `http://127.0.0.1:${grpcP}`], process.env);
  await waitFor("The sqld replica", `${replicaUrl}/health`);

  // the object store every instance shares (s3rver: a devDependency, a local fake of S3)
  const { default: S3rver } = await import("s3rver");
  const fake = new S3rver({ port: s3Port, address: "127.0.0.1", silent: true, directory: resolve(dir, "s3"), configureBuckets: [{ name: "shotbook", configs: [] }] });
  await fake.run();
  s3 = fake;
  const storageUrl = `s3://shotbook?endpoint=http://127.0.0.1:${s3Port}&forcePathStyle=true`;

  // one secret for both app instances (a session cookie made by one is good on the other); set
  // here too because the app modules read the environment once and refuse a weak production secret
  const secret = randomBytes(48).toString("base64");
  process.env.SESSION_SECRET = secret;
  // migrate and seed through the primary; app modules read the environment once, so only now
  process.env.DATABASE_URL = primaryUrl;
  delete process.env.DATABASE_AUTH_TOKEN;
  const { getDb } = await import("~/db/client.server");
  const { migrateDb } = await import("~/db/migrate.server");
  const { startFakeSmtp } = await import("~/mail/fake-smtp.server");
  const { createTokenFor } = await import("~/models/tokens.server");
  const { DEMO_USERS } = await import("~/seed/scenario");
  const { describeSeed, seedDemo } = await import("~/seed/seed.server");
  const db = getDb();
  await migrateDb(db);
  const summary = await seedDemo();
  if (!args.json) for (const line of describeSeed(summary)) console.log(line);
  if (summary.results.rejected.length) throw new Error("Some demo records were rejected; stopping.");
  const tokens: Record<string, string> = {};
  for (const u of summary.users) {
    // one token per role: the first demo user of it (the river project's people)
    if (tokens[u.role]) continue;
    const t = await createTokenFor(null, u.id, "cluster (printed at start)");
    if (t) tokens[u.role] = t.token;
  }
  const shotCount = Number((await db.$client.execute("SELECT count(*) AS n FROM shots")).rows[0]!.n);
  db.$client.close();
  // the replica has the migrated, seeded database before its app starts
  await waitFor("The sqld replica's copy", `${replicaUrl}/v2/pipeline`, async () => {
    const r = await fetch(`${replicaUrl}/v2/pipeline`, {
      method: "POST",
      headers: { "content-type": "application/json" },
      body: JSON.stringify({ requests: [{ type: "execute", stmt: { sql: "SELECT count(*) FROM shots" } }, { type: "close" }] }),
    });
    const j = (await r.json()) as { results: { type: string; response?: { result?: { rows: { value: string }[][] } } }[] };
    return Number(j.results[0]?.response?.result?.rows[0]?.[0]?.value ?? -1) === shotCount;
  });

  const mailDir = resolve(dir, "mail");
  smtp = await startFakeSmtp({ port: smtpPort, mailDir, host: "127.0.0.1" });

  const apps = [
    { name: "app A (primary)", port: appPorts[0]!, db: primaryUrl, dataDir: resolve(dir, "app-a") },
    { name: "app B (replica)", port: appPorts[1]!, db: replicaUrl, dataDir: resolve(dir, "app-b") },
  ];
  for (const a of apps) {
    start(
      a.name,
      process.execPath,
      ["--import", "tsx", resolve("app/cli/serve.ts"), serverEntry],
      {
        ...process.env,
        HOST: "127.0.0.1",
        PORT: String(a.port),
        NODE_ENV: "production",
        COOKIE_SECURE: "false",
        DEV_MAIL_VIEWER: "true",
        DATABASE_URL: a.db,
        DATA_DIR: a.dataDir,
        MAIL_DIR: mailDir,
        SMTP_URL: `smtp://127.0.0.1:${smtpPort}`,
        APP_URL: `http://127.0.0.1:${a.port}`,
        // one secret: a session cookie made by one instance is good on the other
        SESSION_SECRET: secret,
        STORAGE_URL: storageUrl,
        STORAGE_ACCESS_KEY_ID: "S3RVER",
        STORAGE_SECRET_ACCESS_KEY: "S3RVER",
      },
      args.json ? "ignore" : "inherit",
    );
  }
  await Promise.all(apps.map((a) => waitFor(a.name, `http://127.0.0.1:${a.port}/healthz`)));

  const width = Math.max(...DEMO_USERS.map((u) => u.email.length));
  console.log(
    [
      "",
      "Shotbook cluster is running:",
      ...apps.map((a) => `  ${a.name.padEnd(16)} http://127.0.0.1:${a.port}   (DATABASE_URL=${a.db})`),
      `  sqld primary     ${primaryUrl}   (replication gRPC 127.0.0.1:${grpcP})`,
      `  sqld replica     ${replicaUrl}`,
      `  object store     ${storageUrl}   (s3rver, files in ${resolve(dir, "s3")})`,
      `  mail fake        smtp://127.0.0.1:${smtpPort} → ${mailDir}; read codes at http://127.0.0.1:${apps[0]!.port}/dev/mail`,
      "",
      "Sign in on either instance with one of these invented addresses:",
      ...DEMO_USERS.map((u) => `  ${u.role.padEnd(6)}  ${u.email.padEnd(width)}  ${u.name}`),
      `API token (admin; shown once): ${tokens.admin}`,
      `  curl -H "Authorization: Bearer ${tokens.admin}" http://127.0.0.1:${apps[1]!.port}/api/sensors`,
      "",
      "Press Ctrl-C to stop everything.",
      "",
    ].join("\n"),
  );
  if (args.json) {
    const info = {
      apps: apps.map((a) => ({ url: `http://127.0.0.1:${a.port}`, databaseUrl: a.db, dataDir: a.dataDir })),
      primaryUrl,
      replicaUrl,
      storageUrl,
      tokens,
      pids: children.map((c) => c.proc.pid),
    };
    console.log(`CLUSTER ${JSON.stringify(info)}`);
  }
} catch (e) {
  console.error((e as Error).message);
  await stop(1);
}
