// Issue 11: a production server must not run on a secret anyone can read. With the built-in
// default (or the .env.example value) the `_totp` cookie and every session cookie can be
// forged, so production refuses to start unless every SESSION_SECRET entry is strong.
import { spawn } from "node:child_process";
import { randomBytes } from "node:crypto";
import { readFileSync } from "node:fs";
import { resolve } from "node:path";
import { afterEach, expect, test } from "vitest";
import { DEV_SESSION_SECRET, getEnv, KNOWN_EXAMPLE_SECRETS, resetEnvCache } from "~/env.server";

const saved = { NODE_ENV: process.env.NODE_ENV, SESSION_SECRET: process.env.SESSION_SECRET };
const strong = () => randomBytes(48).toString("base64");

afterEach(() => {
  for (const [k, v] of Object.entries(saved)) {
    if (v === undefined) delete process.env[k];
    else process.env[k] = v;
  }
  resetEnvCache();
});

function envWith(nodeEnv: string, secret: string | undefined) {
  process.env.NODE_ENV = nodeEnv;
  if (secret === undefined) delete process.env.SESSION_SECRET;
  else process.env.SESSION_SECRET = secret;
  resetEnvCache();
  return () => getEnv();
}

const exampleValue = () =>
  readFileSync(resolve(process.cwd(), ".env.example"), "utf8")
    .match(/^SESSION_SECRET=(.*)$/m)![1]!
    .trim();

test("production refuses a missing SESSION_SECRET, naming the variable and how to make one", () => {
  expect(envWith("production", undefined)).toThrow(/SESSION_SECRET is not set.*openssl rand -base64 48/s);
  expect(envWith("production", "")).toThrow(/SESSION_SECRET is not set/);
  expect(envWith("production", " , ")).toThrow(/SESSION_SECRET is not set/);
});

test("production refuses the built-in default and the .env.example value, also inside a rotation list", () => {
  const published = [DEV_SESSION_SECRET, exampleValue(), ...KNOWN_EXAMPLE_SECRETS];
  for (const value of published) {
    expect(envWith("production", value), value).toThrow(/SESSION_SECRET.*published example value.*openssl rand/s);
    // A strong first entry does not make a published older entry safe: it still verifies cookies.
    expect(envWith("production", `${strong()},${value}`), value).toThrow(/entry 2 of SESSION_SECRET is a published example value/);
  }
});

test("production refuses a secret shorter than 32 characters in any entry", () => {
  expect(envWith("production", "x".repeat(31))).toThrow(/SESSION_SECRET is 31 characters long; production needs at least 32/);
  expect(envWith("production", `${strong()}, ${"y".repeat(20)}`)).toThrow(/entry 2 of SESSION_SECRET is 20 characters long/);
});

test("production accepts strong secrets (and a rotation list of them); development keeps its default", () => {
  const [a, b] = [strong(), strong()];
  expect(envWith("production", `${a}, ${b}`)().SESSION_SECRET).toEqual([a, b]);
  expect(envWith("production", "z".repeat(32))().SESSION_SECRET).toEqual(["z".repeat(32)]);
  expect(envWith("development", undefined)().SESSION_SECRET).toEqual([DEV_SESSION_SECRET]);
  expect(envWith("test", "")().SESSION_SECRET).toEqual([DEV_SESSION_SECRET]);
});

test("npm start's first step (migrate) exits with the message when the secret is the example value", async () => {
  const r = await new Promise<{ code: number | null; stderr: string }>((res) => {
    const p = spawn("npx", ["tsx", "app/cli/migrate.ts"], {
      env: { ...process.env, NODE_ENV: "production", SESSION_SECRET: exampleValue(), DATABASE_URL: "file::memory:" },
      stdio: ["ignore", "ignore", "pipe"],
    });
    let stderr = "";
    p.stderr.on("data", (d) => (stderr += d));
    p.on("exit", (code) => res({ code, stderr }));
  });
  expect(r.code).not.toBe(0);
  expect(r.stderr).toMatch(/SESSION_SECRET is a published example value/);
}, 60_000);
