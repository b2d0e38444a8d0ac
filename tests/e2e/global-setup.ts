// Starts the BUILT server (npm run build first) on 127.0.0.1 with a fresh database and the
// mail fake, for browser tests driven by playwright-core through Debian's Chromium.
import { spawn, type ChildProcess } from "node:child_process";
import { randomBytes } from "node:crypto";
import { existsSync, mkdirSync, rmSync } from "node:fs";
import { resolve } from "node:path";
import type { TestProject } from "vitest/node";
import { startFakeSmtp, type FakeSmtp } from "../../app/mail/fake-smtp.server";
import { CHROMIUM_PATH } from "./chromium";
import { freePort } from "../support/ports";

declare module "vitest" {
  export interface ProvidedContext {
    baseURL: string;
    databaseUrl: string;
    mailDir: string;
    dataDir: string;
    sessionSecret: string;
  }
}

let server: ChildProcess | undefined;
let smtp: FakeSmtp | undefined;

export default async function setup(project: TestProject) {
  if (!existsSync(CHROMIUM_PATH)) {
    throw new Error(`Chromium not found at ${CHROMIUM_PATH}. Install it with: apt-get install -y chromium`);
  }
  const root = process.cwd();
  const buildDir = process.env.RR_BUILD_DIR ?? "build";
  if (!existsSync(resolve(root, buildDir, "server/index.js"))) {
    throw new Error("No build found: run `npm run build` before the browser tests (npm test does).");
  }
  const dir = resolve(root, `tests/.tmp/e2e-${process.pid}`);
  rmSync(dir, { recursive: true, force: true });
  mkdirSync(dir, { recursive: true });
  const databaseUrl = `file:${resolve(dir, "e2e.db")}`;
  const dataDir = resolve(dir, "data");
  const mailDir = resolve(dataDir, "mail");

  const [port, smtpPort] = [await freePort(), await freePort()];
  smtp = await startFakeSmtp({ port: smtpPort, mailDir });

  const sessionSecret = randomBytes(48).toString("base64");
  const env = {
    ...process.env,
    NODE_ENV: "production",
    HOST: "127.0.0.1",
    PORT: String(port),
    DATABASE_URL: databaseUrl,
    DATA_DIR: dataDir,
    MAIL_DIR: mailDir,
    SMTP_URL: `smtp://127.0.0.1:${smtpPort}`,
    // A production build refuses short or published secrets: a fresh strong one per run.
    SESSION_SECRET: sessionSecret,
    COOKIE_SECURE: "false",
    DEV_MAIL_VIEWER: "true",
    APP_URL: `http://127.0.0.1:${port}`,
  };
  // Migrate and seed the test users with the same CLI code operators use.
  await run(["tsx", "tests/e2e/prepare-db.ts"], env);

  // The production server entry (npm start), which also hands the socket address to the app.
  server = spawn(process.execPath, ["--import", "tsx", "app/cli/serve.ts", `${buildDir}/server/index.js`], {
    env,
    stdio: ["ignore", "inherit", "inherit"],
  });
  const baseURL = `http://127.0.0.1:${port}`;
  const deadline = Date.now() + 30_000;
  for (;;) {
    try {
      const r = await fetch(`${baseURL}/healthz`);
      if (r.ok) break;
    } catch {}
    if (Date.now() > deadline) throw new Error("The built server did not answer /healthz within 30 s");
    await new Promise((r) => setTimeout(r, 200));
  }
  project.provide("baseURL", baseURL);
  project.provide("databaseUrl", databaseUrl);
  project.provide("mailDir", mailDir);
  project.provide("dataDir", dataDir);
  project.provide("sessionSecret", sessionSecret);

  return async () => {
    server?.kill("SIGTERM");
    await smtp?.close();
    rmSync(dir, { recursive: true, force: true });
  };
}

function run(cmd: string[], env: NodeJS.ProcessEnv) {
  return new Promise<void>((res, rej) => {
    const p = spawn("npx", cmd, { env, stdio: "inherit" });
    p.on("exit", (code) => (code === 0 ? res() : rej(new Error(`${cmd.join(" ")} exited ${code}`))));
  });
}
