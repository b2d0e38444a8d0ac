import type { Config } from "@react-router/dev/config";
import { existsSync, readdirSync, readFileSync } from "node:fs";
import { join } from "node:path";

export default {
  ssr: true,
  // Parallel local builds (several people, one tree) may each use their own folder.
  buildDirectory: process.env.RR_BUILD_DIR ?? "build",
  // React Router writes build/client/assets/manifest-*.js after vite-plugin-pwa made its
  // precache list: build the worker again now so the offline app knows every route.
  async buildEnd({ viteConfig, reactRouterConfig }) {
    const pwa = viteConfig.plugins.find((p) => p.name === "vite-plugin-pwa") as { api?: { disabled?: boolean; generateSW(): Promise<unknown> } } | undefined;
    if (!pwa?.api || pwa.api.disabled) return;
    await pwa.api.generateSW();
    const client = join(reactRouterConfig.buildDirectory, "client");
    const manifest = readdirSync(join(client, "assets")).find((f) => /^manifest-[\w-]+\.js$/.test(f));
    const sw = join(client, "sw.js");
    if (manifest && existsSync(sw) && !readFileSync(sw, "utf8").includes(`assets/${manifest}`)) {
      throw new Error(`The service worker's precache list lacks assets/${manifest}`);
    }
  },
  // Future flags of 7.x turned on so the next major is a small step.
  // v8_viteEnvironmentApi stays off: vite-plugin-pwa 1.x hooks the classic build.
  future: {
    v8_middleware: true,
    v8_splitRouteModules: true,
    v8_trailingSlashAwareDataRequests: true,
  },
} satisfies Config;
