// From the sources only (vitest, `react-router dev`, tsx): a worker thread does not inherit the
// TypeScript loader of the thread that started it, so this plain module registers tsx's and
// then loads the LAZ worker. The built server loads its JavaScript worker chunk directly.
import { register } from "tsx/esm/api";

register();
const worker = await import("./laz.worker.ts");
export const decodeChunks = worker.decodeChunks;
