// POST /api/sync from the body's bytes to the answer's bytes (issue 16). On the production
// server the whole request runs on a sync worker thread: the JSON parse of a 500-shot body,
// zod, the reads of stored ids and registry rows, the computation, the write transaction and
// the answer's JSON (gzipped there when the client takes it). The thread that serves every
// other request only reads the body, hands its bytes over (moved, not copied) and sends back
// what comes out. Measured under 6 syncing clients, the structured clones of records and rows
// between the threads, the reads on the request thread and the answer's compression were the
// longest holds of its event loop (docs/decisions/0007).
import { gzipSync } from "node:zlib";
import { isSharedFile } from "~/db/client.server";
import { DatabaseUnavailable } from "~/db/transient.server";
import { getEnv } from "~/env.server";
import type { Actor } from "./actor";
import { syncPool } from "./sync-pool.server";
import { checkpointSoon } from "./report-pool.server";
import { ingestSync } from "./sync.server";

/** The answer as it goes out: its body already serialised (and compressed when `Content-Encoding` says so). */
export type SyncAnswer = { status: number; body: string | Uint8Array<ArrayBuffer>; headers: Record<string, string>; sensorIds?: string[] };

export const NOT_JSON = "The body is not JSON (or it arrived incomplete); nothing was written.";

/** As the server's compression middleware does: answers under 1 KB go as they are. */
const GZIP_FROM_BYTES = 1024;

const json = (status: number, value: unknown, headers: Record<string, string> = {}, sensorIds?: string[]): SyncAnswer => ({
  status,
  body: JSON.stringify(value),
  // Response.json's own content type
  headers: { "Content-Type": "application/json", ...headers },
  sensorIds,
});

/** Whether the request's Accept-Encoding takes gzip (a q of 0 refuses it; `*` stands for any). */
export function acceptsGzip(acceptEncoding: string | null): boolean {
  if (!acceptEncoding) return false;
  let star = false;
  for (const part of acceptEncoding.split(",")) {
    const [name, ...params] = part.trim().toLowerCase().split(";");
    const q = params.map((p) => p.trim()).find((p) => p.startsWith("q="));
    const ok = q === undefined || Number(q.slice(2)) > 0;
    if (name === "gzip") return ok;
    if (name === "*") star = ok;
  }
  return star;
}

/** The request on the thread this runs on: parse, ingest, answer (gzipped if asked and worth it). */
export async function answerSyncBytes(actor: Actor, bytes: Uint8Array, gzip: boolean): Promise<SyncAnswer> {
  let body: unknown;
  try {
    body = JSON.parse(new TextDecoder().decode(bytes));
  } catch {
    return json(400, { error: NOT_JSON });
  }
  let answer: Awaited<ReturnType<typeof ingestSync>>;
  try {
    answer = await ingestSync(actor, body);
  } catch (e) {
    // busy, or a replica that cannot reach its primary, after the tries inside the request
    // (as unavailableResponse words it: the class does not survive the thread boundary)
    if (e instanceof DatabaseUnavailable) return json(503, { error: e.message }, { "Retry-After": String(e.retryAfterS), "Cache-Control": "no-store" });
    throw e;
  }
  const out = json(answer.status, answer.body, { "Cache-Control": "no-store", ...answer.headers }, answer.sensorIds);
  if (gzip && typeof out.body === "string" && out.body.length >= GZIP_FROM_BYTES) {
    out.body = gzipSync(out.body);
    // the middleware leaves an answer with an encoding alone
    Object.assign(out.headers, { "Content-Encoding": "gzip", Vary: "Accept-Encoding" });
  }
  return out;
}

/**
 * The route's entry: on a sync worker for the server's own database file, else here (tests,
 * dev, remote databases: module mocks and one-process debugging keep working; the compression
 * middleware compresses as for any answer).
 */
export async function answerSync(actor: Actor, bytes: Uint8Array<ArrayBuffer>, acceptEncoding: string | null): Promise<SyncAnswer> {
  const pool = syncPool();
  if (!pool || !isSharedFile(getEnv().DATABASE_URL)) return answerSyncBytes(actor, bytes, false);
  const whole = bytes.byteOffset === 0 && bytes.byteLength === bytes.buffer.byteLength;
  const answer = (await pool.run(
    { actor: { id: actor.id, role: actor.role }, bytes, gzip: acceptsGzip(acceptEncoding) },
    // the body's buffer moves to the worker instead of being copied
    { name: "ingest", transferList: whole ? [bytes.buffer] : [] },
  )) as SyncAnswer;
  // decision 0011: what this sync committed is copied into the database file on a report thread
  if (answer.status === 200) checkpointSoon();
  return answer;
}
