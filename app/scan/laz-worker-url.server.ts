// Where the LAZ worker's module is (issue 18). From the sources (vitest, dev, tsx) it is the
// TypeScript file beside this one; in `npm run build` the vite plugin in vite.config.ts
// ("shotbook-laz-worker") replaces this module with the URL of the worker chunk it emits into
// build/server/assets, so the built server needs no source tree.
export const lazWorkerUrl: string = new URL("./laz.worker.ts", import.meta.url).href;
