// Who is asking, for the per-client rate limits. The socket's remote address comes from the
// server entry (app/cli/serve.ts, getLoadContext) through this context; X-Forwarded-For is
// believed only as far as TRUST_PROXY says proxies of our own appended to it, because a client
// can put anything in the header itself (issue 11).
import { createContext, type RouterContextProvider } from "react-router";
import { getEnv } from "~/env.server";

/** The TCP peer of the request; null where no server entry set it (tests, tools). */
export const clientAddressContext = createContext<string | null>(null);

/** What a route's loader/action receives as `context`. */
type Context = Pick<RouterContextProvider, "get"> | Record<string, unknown> | undefined | null;

function socketAddress(context: Context): string | null {
  const get = (context as { get?: unknown } | null | undefined)?.get;
  if (typeof get !== "function") return null;
  try {
    return (context as Pick<RouterContextProvider, "get">).get(clientAddressContext);
  } catch {
    return null;
  }
}

/** "::ffff:203.0.113.7" and "203.0.113.7" are one client. */
function normalize(address: string) {
  const a = address.trim().slice(0, 64);
  return a.startsWith("::ffff:") && a.includes(".") ? a.slice(7) : a;
}

/**
 * The client's address: with TRUST_PROXY = n, the entry n hops from the right of the chain
 * "X-Forwarded-For entries, then the socket" (each trusted proxy appends the peer it saw);
 * with 0, the socket itself. "unknown" only where nothing says (never the case behind serve.ts).
 */
export function clientIp(request: Request, context?: Context, hops = getEnv().TRUST_PROXY): string {
  const socket = socketAddress(context);
  if (hops > 0) {
    const forwarded = (request.headers.get("X-Forwarded-For") ?? "")
      .split(",")
      .map((s) => s.trim())
      .filter(Boolean);
    const chain = [...forwarded, socket ?? "unknown"];
    return normalize(chain[Math.max(0, chain.length - 1 - hops)]!);
  }
  return socket ? normalize(socket) : "unknown";
}
