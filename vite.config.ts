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

// issue 16: the sync worker thread's module (app/models/sync.worker.ts) becomes its own chunk
// of the server build, and app/models/sync-worker-url.server.ts the URL of that chunk, so
// build/server runs its worker without the sources or tsx.
const syncWorker = (): Plugin => ({
  name: "shotbook-sync-worker",
  apply: "build",
  load(id, options) {
    if (!options?.ssr || !id.replace(/\\/g, "/").endsWith("/app/models/sync-worker-url.server.ts")) return;
    const ref = this.emitFile({ type: "chunk", id: fileURLToPath(new URL("./app/models/sync.worker.ts", import.meta.url)), name: "sync-worker" });
    return `export const syncWorkerUrl = import.meta.ROLLUP_FILE_URL_${ref};`;
  },
});

// issue 16: the report worker thread's module (app/models/report.worker.ts), the same way.
const reportWorker = (): Plugin => ({
  name: "shotbook-report-worker",
  apply: "build",
  load(id, options) {
    if (!options?.ssr || !id.replace(/\\/g, "/").endsWith("/app/models/report-worker-url.server.ts")) return;
    const ref = this.emitFile({ type: "chunk", id: fileURLToPath(new URL("./app/models/report.worker.ts", import.meta.url)), name: "report-worker" });
    return `export const reportWorkerUrl = import.meta.ROLLUP_FILE_URL_${ref};`;
  },
});

export default defineConfig({
  resolve: {
    alias: { "~": fileURLToPath(new URL("./app", import.meta.url)) },
  },
  plugins: isVitest ? [] : [tailwindcss(), reactRouter(), pwa(), syncWorker(), reportWorker()],
  test: {
    include: ["app/**/*.test.ts", "tests/integration/**/*.test.ts"],
    environment: "node",
    globalSetup: ["tests/integration/global-setup.ts"],
    setupFiles: ["tests/integration/setup.ts"],
    testTimeout: 20000,
    hookTimeout: 60000,
  },
});
