import type { Config } from "@react-router/dev/config";

export default {
  ssr: true,
  // Parallel local builds (several people, one tree) may each use their own folder.
  buildDirectory: process.env.RR_BUILD_DIR ?? "build",
  // Future flags of 7.x turned on so the next major is a small step.
  // v8_viteEnvironmentApi stays off: vite-plugin-pwa 1.x hooks the classic build.
  future: {
    v8_middleware: true,
    v8_splitRouteModules: true,
    v8_trailingSlashAwareDataRequests: true,
  },
} satisfies Config;
