// Per test file: a fresh copy of the migrated base database, so files never share rows.
import { copyFileSync, mkdirSync, rmSync } from "node:fs";
import { resolve } from "node:path";
import { afterAll, beforeAll, vi } from "vitest";

const TMP = resolve(process.cwd(), "tests/.tmp");
const BASE_DB = resolve(TMP, "base.db");
const worker = process.env.VITEST_POOL_ID ?? "0";
const file = resolve(TMP, `worker-${worker}-${process.pid}-${Math.random().toString(36).slice(2, 8)}.db`);

mkdirSync(TMP, { recursive: true });
copyFileSync(BASE_DB, file);
process.env.DATABASE_URL = `file:${file}`;
process.env.DATA_DIR = resolve(TMP, `data-${worker}-${process.pid}`);
process.env.MAIL_DIR = resolve(process.env.DATA_DIR, "mail");
process.env.NODE_ENV = "test";

// console.error in a test is a failure unless the test expects it (vi.spyOn to allow).
const originalError = console.error;
beforeAll(() => {
  console.error = (...args: unknown[]) => {
    originalError(...args);
    throw new Error(`console.error was called: ${args.map(String).join(" ")}`);
  };
});

afterAll(async () => {
  console.error = originalError;
  const { resetDb } = await import("~/db/client.server");
  resetDb();
  for (const f of [file, file + "-wal", file + "-shm"]) rmSync(f, { force: true });
  vi.restoreAllMocks();
});
