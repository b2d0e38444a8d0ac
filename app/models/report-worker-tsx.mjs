// From the sources only (vitest, `react-router dev`, tsx): registers tsx's TypeScript loader in
// the worker thread (it does not inherit the parent's), then loads the report worker.
import { register } from "tsx/esm/api";

register();
const worker = await import("./report.worker.ts");
export const reportJson = worker.reportJson;
export const warm = worker.warm;
export const checkpoint = worker.checkpoint;
