// Errors of the database link that say "not now" rather than "never": a lock held by another
// writer (SQLITE_BUSY, "database is locked"), a libSQL server's replica failing to reach its
// primary (PROXY_ERROR without a constraint in it), a dropped connection or a 5xx of the server.
// Such a request is tried again a few times inside the request; when the database still does
// not answer, the route answers 503 with Retry-After (api.md), never a 500.

export class DatabaseUnavailable extends Error {
  readonly retryAfterS: number;
  constructor(cause: unknown, retryAfterS = 2) {
    super("The database is busy or out of reach; nothing was written — try again shortly.", { cause });
    this.name = "DatabaseUnavailable";
    this.retryAfterS = retryAfterS;
  }
}

const TRANSIENT_CODES = /^(SQLITE_BUSY|SQLITE_LOCKED|SQLITE_IOERR_LOCK|ECONNRESET|ECONNREFUSED|ETIMEDOUT|EPIPE|UND_ERR_|HRANA_WEBSOCKET_ERROR|SERVER_ERROR|STREAM_EXPIRED)/;
const TRANSIENT_TEXT =
  /database is locked|database table is locked|SQLITE_BUSY|fetch failed|socket hang up|ECONNRESET|ECONNREFUSED|other side closed|stream (?:expired|closed)|Server returned HTTP status 5\d\d/i;
/** A replica's forwarding error carries the primary's own message; a refused write is not transient. */
const PERMANENT_TEXT = /constraint failed|no such (?:table|column)|syntax error|datatype mismatch/i;

function codesOf(e: unknown): string[] {
  const out: string[] = [];
  for (let x: unknown = e, depth = 0; x && typeof x === "object" && depth < 5; x = (x as { cause?: unknown }).cause, depth++) {
    const o = x as { code?: unknown; rawCode?: unknown; message?: unknown };
    if (typeof o.code === "string") out.push(o.code);
    if (typeof o.message === "string") out.push(o.message);
  }
  return out;
}

export function isTransientDbError(e: unknown): boolean {
  if (e instanceof DatabaseUnavailable) return true;
  const parts = codesOf(e);
  if (parts.some((p) => PERMANENT_TEXT.test(p))) return false;
  if (parts.some((p) => p === "PROXY_ERROR" || p.startsWith("PROXY_ERROR"))) return true;
  return parts.some((p) => TRANSIENT_CODES.test(p) || TRANSIENT_TEXT.test(p));
}

export type RetryOptions = { attempts?: number; baseDelayMs?: number; sleep?: (ms: number) => Promise<void> };

/**
 * Runs fn, again after a short jittered pause when it fails transiently (fn must be safe to
 * repeat: the sync ingest is, by its ids). After the last try it throws DatabaseUnavailable.
 */
export async function retryTransient<T>(fn: () => Promise<T>, o: RetryOptions = {}): Promise<T> {
  const attempts = o.attempts ?? 4;
  const base = o.baseDelayMs ?? 50;
  const sleep = o.sleep ?? ((ms: number) => new Promise<void>((r) => setTimeout(r, ms)));
  for (let i = 0; ; i++) {
    try {
      return await fn();
    } catch (e) {
      if (!isTransientDbError(e)) throw e;
      if (i + 1 >= attempts) throw e instanceof DatabaseUnavailable ? e : new DatabaseUnavailable(e);
      const ms = base * 2 ** i;
      await sleep(ms / 2 + Math.random() * ms);
    }
  }
}

/** The 503 a route answers for DatabaseUnavailable (its body and header as api.md words them). */
export function unavailableResponse(e: DatabaseUnavailable) {
  return Response.json({ error: e.message }, { status: 503, headers: { "Retry-After": String(e.retryAfterS), "Cache-Control": "no-store" } });
}
