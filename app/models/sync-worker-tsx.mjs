// From the sources only (vitest, `react-router dev`, tsx): a worker thread does not inherit the
// TypeScript loader of the thread that started it, so this plain module registers tsx's and
// then loads the worker. The built server loads its JavaScript worker chunk directly.
import { register } from "tsx/esm/api";

register();
const worker = await import("./sync.worker.ts");
export const validate = worker.validate;
export const shots = worker.shots;
export const write = worker.write;
export const ingest = worker.ingest;
