import { fileURLToPath } from "node:url";
import { defineConfig } from "vitest/config";

export default defineConfig({
  root: fileURLToPath(new URL("../..", import.meta.url)),
  resolve: { alias: { "~": fileURLToPath(new URL("../../app", import.meta.url)) } },
  test: {
    include: ["tests/e2e/**/*.e2e.ts"],
    globalSetup: ["tests/e2e/global-setup.ts"],
    fileParallelism: false,
    pool: "forks",
    testTimeout: 60000,
    hookTimeout: 120000,
  },
});
