// Where the report worker's module is (issue 16), as sync-worker-url.server.ts for the sync
// worker: from the sources the TypeScript file beside this one; in `npm run build` the vite
// plugin "shotbook-report-worker" (vite.config.ts) replaces this module with the URL of the
// chunk it emits into build/server/assets.
export const reportWorkerUrl: string = new URL("./report.worker.ts", import.meta.url).href;
