import { reactRouter } from "@react-router/dev/vite";
import tailwindcss from "@tailwindcss/vite";
import { defineConfig } from "vitest/config";
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

export default defineConfig({
  resolve: {
    alias: { "~": fileURLToPath(new URL("./app", import.meta.url)) },
  },
  plugins: isVitest ? [] : [tailwindcss(), reactRouter(), pwa()],
  test: {
    include: ["app/**/*.test.ts", "tests/integration/**/*.test.ts"],
    environment: "node",
    globalSetup: ["tests/integration/global-setup.ts"],
    setupFiles: ["tests/integration/setup.ts"],
    testTimeout: 20000,
    hookTimeout: 60000,
  },
});
