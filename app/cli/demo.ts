// npm run demo (= react-router build && tsx app/cli/demo.ts [--port 3000] [--smtp-port 2525]) — the
// invented Fernhollow Geomatics demo on this machine: migrates and (re)seeds a demo database, starts
// the local mail fake on 127.0.0.1:SMTP_PORT (2525), serves the build on 127.0.0.1:PORT (3000) and
// prints how to sign in.
// Ctrl-C stops both. DATABASE_URL, when set, is used instead of file:./data/demo.db (its demo
// rows are replaced; nothing else in it is touched). RR_BUILD_DIR picks another build folder.
import { spawn, type ChildProcess } from "node:child_process";
import { randomBytes } from "node:crypto";
import { existsSync, rmSync } from "node:fs";
import { resolve } from "node:path";
import { parseDemoOptions } from "./demo-options";

const DEFAULT_DB = "file:./data/demo.db";

const parsed = parseDemoOptions(process.argv.slice(2), process.env);
if (!parsed.ok) {
  console.error(parsed.error);
  process.exit(2);
}
const { port, smtpPort: SMTP_PORT } = parsed.options;
console.log(`Starting the demo: app on port ${port} (PORT), mail fake on port ${SMTP_PORT} (SMTP_PORT).`);
const ownDatabase = !process.env.DATABASE_URL;
process.env.DATABASE_URL ??= DEFAULT_DB;
process.env.DATA_DIR ??= "./data";
process.env.MAIL_DIR ??= "./data/mail";
const appUrl = `http://localhost:${port}`;
const buildDir = process.env.RR_BUILD_DIR ?? "build";
const serverEntry = resolve(buildDir, "server/index.js");
if (!existsSync(serverEntry)) {
  console.error(`No build at ${serverEntry}: run \`npm run demo\` (it builds first) or \`npx react-router build\`.`);
  process.exit(1);
}

// App modules read the environment once, so they load only after it is settled above.
const { getDb } = await import("~/db/client.server");
const { migrateDb } = await import("~/db/migrate.server");
const { startFakeSmtp } = await import("~/mail/fake-smtp.server");
const { createTokenFor } = await import("~/models/tokens.server");
const { DEMO_USERS } = await import("~/seed/scenario");
const { deleteDemoRows, demoIsSeeded, describeSeed, localDatabaseFile, seedDemo } = await import("~/seed/seed.server");

const databaseUrl = process.env.DATABASE_URL;
const file = localDatabaseFile(databaseUrl);
if (ownDatabase && file) {
  for (const f of [file, `${file}-wal`, `${file}-shm`]) rmSync(f, { force: true });
}
const db = getDb();
await migrateDb(db);
if (await demoIsSeeded()) await deleteDemoRows();
const summary = await seedDemo();
for (const line of describeSeed(summary)) console.log(line);
if (summary.results.rejected.length) {
  console.error("Some demo records were rejected; the demo would not show what it should. Stopping.");
  process.exit(1);
}
const admin = summary.users.find((u) => u.role === "admin")!;
const token = await createTokenFor(null, admin.id, "demo (printed at start)");
db.$client.close();

let smtp: Awaited<ReturnType<typeof startFakeSmtp>>;
try {
  smtp = await startFakeSmtp({ port: SMTP_PORT, mailDir: process.env.MAIL_DIR, host: "127.0.0.1" });
} catch (e) {
  console.error(`Could not start the mail fake on 127.0.0.1:${SMTP_PORT} (${(e as Error).message}). Is another demo running? Set SMTP_PORT to a free port.`);
  process.exit(1);
}

const child: ChildProcess = spawn(process.execPath, ["--import", "tsx", resolve("app/cli/serve.ts"), serverEntry], {
  env: {
    ...process.env,
    HOST: "127.0.0.1",
    PORT: String(port),
    NODE_ENV: "production",
    COOKIE_SECURE: "false",
    DEV_MAIL_VIEWER: "true",
    SMTP_URL: `smtp://127.0.0.1:${SMTP_PORT}`,
    APP_URL: appUrl,
    SESSION_SECRET: randomBytes(32).toString("hex"),
    DATABASE_URL: databaseUrl,
  },
  stdio: ["ignore", "inherit", "inherit"],
});

let stopping = false;
async function stop(code: number) {
  if (stopping) return;
  stopping = true;
  if (child.exitCode === null && child.signalCode === null) {
    child.kill("SIGTERM");
    await new Promise((r) => {
      const t = setTimeout(() => {
        child.kill("SIGKILL");
        r(null);
      }, 5000);
      child.once("exit", () => {
        clearTimeout(t);
        r(null);
      });
    });
  }
  await smtp.close();
  process.exit(code);
}
process.on("SIGINT", () => {
  // Ctrl-C reaches this process (often twice, relayed by npm and tsx) and the app server alike
  if (!stopping) console.log("\nStopping the demo…");
  void stop(0);
});
process.on("SIGTERM", () => void stop(0));
child.once("exit", (code, signal) => {
  if (stopping) return;
  console.error(`The app server stopped (${signal ?? `exit code ${code}`}).`);
  void stop(code || 1);
});

const local = `http://127.0.0.1:${port}`;
const deadline = Date.now() + 30_000;
for (;;) {
  try {
    const r = await fetch(`${local}/healthz`);
    if (r.ok) break;
  } catch {}
  if (stopping) await new Promise(() => {});
  if (Date.now() > deadline) {
    console.error(`The app did not answer ${local}/healthz within 30 s.`);
    await stop(1);
  }
  await new Promise((r) => setTimeout(r, 250));
}

const width = Math.max(...DEMO_USERS.map((u) => u.email.length));
const lines = [
  "",
  `Shotbook demo is running: ${appUrl}`,
  "",
  "Sign in with one of these invented addresses:",
  ...DEMO_USERS.map((u) => `  ${u.role.padEnd(6)}  ${u.email.padEnd(width)}  ${u.name}`),
  `Then read your sign-in code at ${appUrl}/dev/mail`,
  "",
  `App port: ${port} (PORT)   Mail fake port: ${SMTP_PORT} (SMTP_PORT)`,
  `Database: ${databaseUrl}   Mail: smtp://127.0.0.1:${SMTP_PORT} → ${process.env.MAIL_DIR}`,
];
if (token) {
  lines.push(`API token (acts as ${admin.email}, admin; shown once): ${token.token}`, `  curl -H "Authorization: Bearer ${token.token}" ${appUrl}/api/sensors`);
}
lines.push("", "Press Ctrl-C to stop.", "");
console.log(lines.join("\n"));
