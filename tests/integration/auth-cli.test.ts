// The user and token commands, spawned as operators run them, against a fresh (unmigrated)
// database file; the printed token then authenticates GET /api/me on that database.
import { spawn } from "node:child_process";
import { randomBytes } from "node:crypto";
import { rmSync } from "node:fs";
import { resolve } from "node:path";
import { afterAll, expect, test } from "vitest";
import { resetDb } from "~/db/client.server";
import { resetEnvCache } from "~/env.server";
import * as apiMe from "~/routes/api.me";
import { answerOf, args, getRequest } from "./auth-helpers";

const file = resolve(process.cwd(), `tests/.tmp/cli-${process.pid}-${Math.random().toString(36).slice(2, 8)}.db`);
const url = `file:${file}`;
const ownUrl = process.env.DATABASE_URL;

afterAll(() => {
  resetDb();
  process.env.DATABASE_URL = ownUrl;
  resetEnvCache();
  for (const f of [file, `${file}-wal`, `${file}-shm`]) rmSync(f, { force: true });
});

function run(script: string, argv: string[]) {
  return new Promise<{ code: number | null; stdout: string; stderr: string }>((res) => {
    const p = spawn("npx", ["tsx", script, ...argv], {
      env: { ...process.env, DATABASE_URL: url, NODE_ENV: "production", SESSION_SECRET: randomBytes(48).toString("base64") },
      stdio: ["ignore", "pipe", "pipe"],
    });
    let stdout = "";
    let stderr = "";
    p.stdout.on("data", (d) => (stdout += d));
    p.stderr.on("data", (d) => (stderr += d));
    p.on("exit", (code) => res({ code, stdout, stderr }));
  });
}

test("user add migrates a new database, creates the user, and is idempotent", async () => {
  const first = await run("app/cli/user.ts", ["add", "--email", "Pipeline@Fernhollow.test", "--role", "qa", "--name", "Nightly export"]);
  expect(first.stderr).toBe("");
  expect(first.code).toBe(0);
  expect(first.stdout).toMatch(/^Created: pipeline@fernhollow\.test \(qa\)/);
  const again = await run("app/cli/user.ts", ["add", "--email", "pipeline@fernhollow.test", "--role", "qa", "--name", "Nightly export"]);
  expect(again.code).toBe(0);
  expect(again.stdout).toMatch(/^Unchanged:/);
  const changed = await run("app/cli/user.ts", ["add", "--email", "pipeline@fernhollow.test", "--role", "crew"]);
  expect(changed.stdout).toMatch(/^Updated: pipeline@fernhollow\.test \(crew\)/);
  const list = await run("app/cli/user.ts", ["list"]);
  expect(list.stdout.trim()).toBe("pipeline@fernhollow.test\tcrew\tactive\tNightly export");
}, 60_000);

test("user add refuses a bad role with a usage message", async () => {
  const bad = await run("app/cli/user.ts", ["add", "--email", "x@fernhollow.test", "--role", "owner"]);
  expect(bad.code).toBe(2);
  expect(bad.stderr).toMatch(/--role must be one of admin, qa, crew, viewer/);
}, 30_000);

test("token prints only the token on the last line, and that token authenticates as the user", async () => {
  const r = await run("app/cli/token.ts", ["--email", "pipeline@fernhollow.test", "--name", "nightly export"]);
  expect(r.code).toBe(0);
  const lines = r.stdout.trimEnd().split("\n");
  const token = lines.at(-1)!;
  expect(token).toMatch(/^sbk_[0-9a-f]{64}$/);
  expect(r.stderr).toMatch(/nightly export/);

  process.env.DATABASE_URL = url;
  resetEnvCache();
  resetDb();
  const a = await answerOf(() => apiMe.loader(args(getRequest("/api/me", { bearer: token }))));
  expect(a.status).toBe(200);
  expect(a.body).toMatchObject({ email: "pipeline@fernhollow.test", role: "crew", name: "Nightly export" });
  const wrong = await answerOf(() => apiMe.loader(args(getRequest("/api/me", { bearer: token.slice(0, -1) + (token.endsWith("0") ? "1" : "0") }))));
  expect(wrong.status).toBe(401);
}, 60_000);

test("token for an unknown address fails with a hint and prints no token", async () => {
  const r = await run("app/cli/token.ts", ["--email", "nobody@fernhollow.test"]);
  expect(r.code).toBe(1);
  expect(r.stdout).toBe("");
  expect(r.stderr).toMatch(/npm run user -- add/);
}, 30_000);
