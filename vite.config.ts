import { reactRouter } from "@react-router/dev/vite";
import tailwindcss from "@tailwindcss/vite";
import { defineConfig } from "vitest/config";
import type { Plugin } from "vite";
import { fileURLToPath } from "node:url";
import { VitePWA } from "vite-plugin-pwa";

const isVitest = Boolean(process.env.VITEST);
const buildDirectory = process.env.RR_BUILD_DIR ?? "build";

// The service worker (sw/sw.ts) with the precache list of the client build. The web app
// manifest is the static public/manifest.webmanifest (so dev and build serve the same file).
// react-router.config.ts regenerates the list at buildEnd, once React Router has written its
// own build manifest (assets/manifest-*.js).
const pwa = () =>
  VitePWA({
    strategies: "injectManifest",
    srcDir: "sw",
    filename: "sw.ts",
    injectRegister: false,
    manifest: false,
    outDir: `${buildDirectory}/client`,
    injectManifest: {
      globPatterns: ["**/*.{js,css,woff2,svg,png,html,webmanifest}"],
      // The range-error map (MapLibre, ~1 MB) is an office page that needs the network anyway.
      globIgnores: ["**/range-map-*"],
      maximumFileSizeToCacheInBytes: 5 * 1024 * 1024,
    },
  });

// Worker threads of the server (issue 16: sync, report; issue 18: LAZ): each worker module becomes its
// own chunk of the server build, and its "-url.server.ts" module the URL of that chunk, so
// build/server runs its workers without the sources or tsx.
const workerChunk = (name: string, urlModule: string, workerModule: string, exportName: string): Plugin => ({
  name: `shotbook-${name}`,
  apply: "build",
  load(id, options) {
    if (!options?.ssr || !id.replace(/\\/g, "/").endsWith(`/${urlModule}`)) return;
    const ref = this.emitFile({ type: "chunk", id: fileURLToPath(new URL(`./${workerModule}`, import.meta.url)), name });
    return `export const ${exportName} = import.meta.ROLLUP_FILE_URL_${ref};`;
  },
});
const workers = [
  workerChunk("sync-worker", "app/models/sync-worker-url.server.ts", "app/models/sync.worker.ts", "syncWorkerUrl"),
  workerChunk("report-worker", "app/models/report-worker-url.server.ts", "app/models/report.worker.ts", "reportWorkerUrl"),
  workerChunk("laz-worker", "app/scan/laz-worker-url.server.ts", "app/scan/laz.worker.ts", "lazWorkerUrl"),
];

export default defineConfig({
  resolve: {
    alias: [
      { find: "~", replacement: fileURLToPath(new URL("./app", import.meta.url)) },
      // Dexie's package entry wraps its ES5 build; its modern ES module build is the same library in
      // fewer bytes (the field screen's JavaScript budget, tests/bench/field.bench.ts).
      { find: /^dexie$/, replacement: "dexie/dist/modern/dexie.mjs" },
    ],
  },
  plugins: isVitest ? [] : [tailwindcss(), reactRouter(), pwa(), ...workers],
  test: {
    include: ["app/**/*.test.ts", "tests/integration/**/*.test.ts"],
    environment: "node",
    globalSetup: ["tests/integration/global-setup.ts"],
    setupFiles: ["tests/integration/setup.ts"],
    testTimeout: 20000,
    hookTimeout: 60000,
  },
});
