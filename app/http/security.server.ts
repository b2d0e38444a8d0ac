// Security headers on every answer (documents and resource routes) and the cross-site check
// for cookie-authenticated API writes (issue 11). Runs as root middleware.
import { createContext, type MiddlewareFunction } from "react-router";
import { getEnv } from "~/env.server";

/** The per-request nonce for React Router's inline scripts (entry.server.tsx, root.tsx). */
export const nonceContext = createContext<string>("");

/** Pages that show a secret once (a sign-in code step, a new API token): never cached. */
const NO_STORE_PATHS = new Set(["/login", "/login/code", "/auth/magic", "/admin/tokens"]);
const WRITES = new Set(["POST", "PUT", "PATCH", "DELETE"]);

function originOf(url: string | undefined) {
  if (!url) return null;
  try {
    return new URL(url).origin;
  } catch {
    return null;
  }
}

export function contentSecurityPolicy(nonce: string, env = getEnv()) {
  const basemap = originOf(env.BASEMAP_STYLE_URL);
  const extra = basemap ? ` ${basemap}` : "";
  return [
    "default-src 'self'",
    `script-src 'self' 'nonce-${nonce}'`,
    // React's style attributes and MapLibre's element styles are inline styles.
    "style-src 'self' 'unsafe-inline'",
    `img-src 'self' data: blob:${extra}`,
    "font-src 'self' data:",
    `connect-src 'self'${extra}`,
    // MapLibre draws in a worker it starts from a blob: URL; the service worker is /sw.js.
    "worker-src 'self' blob:",
    "manifest-src 'self'",
    "object-src 'none'",
    "base-uri 'self'",
    "form-action 'self'",
    "frame-ancestors 'none'",
  ].join("; ");
}

/**
 * A write by cookie to the API from another site (a form or fetch on a foreign page that the
 * browser sends with our SameSite=Lax cookie on top-level POSTs it may not, but older browsers
 * and same-site subdomains might) is refused. Bearer-token callers are not browsers: exempt.
 */
export function crossSiteWrite(request: Request, env = getEnv()): boolean {
  const url = new URL(request.url);
  if (!WRITES.has(request.method.toUpperCase())) return false;
  if (!url.pathname.startsWith("/api/") && url.pathname !== "/review/import/chunk") return false;
  if (/^Bearer\s/i.test(request.headers.get("Authorization") ?? "")) return false;
  if (!request.headers.get("Cookie")) return false;
  const site = request.headers.get("Sec-Fetch-Site");
  if (site) return site !== "same-origin" && site !== "none";
  const origin = request.headers.get("Origin");
  if (!origin) return false; // not a browser (browsers send Origin on every cross-origin POST)
  return origin !== url.origin && origin !== originOf(env.APP_URL);
}

function withHeaders(response: Response, set: (h: Headers) => void) {
  try {
    set(response.headers);
    return response;
  } catch {
    // Some responses have immutable headers (Response.redirect, fetch answers): copy them.
    const copy = new Response(response.body, response);
    set(copy.headers);
    return copy;
  }
}

export const securityHeaders: MiddlewareFunction<Response> = async ({ request, context }, next) => {
  if (crossSiteWrite(request)) {
    return Response.json({ error: "Cross-site request refused: send it from Shotbook's own pages, or use an API token." }, { status: 403 });
  }
  const nonce = btoa(String.fromCharCode(...crypto.getRandomValues(new Uint8Array(16))));
  context.set(nonceContext, nonce);
  const response = await next();
  const path = new URL(request.url).pathname.replace(/\.data$/, "");
  return withHeaders(response, (h) => {
    h.set("Content-Security-Policy", contentSecurityPolicy(nonce));
    h.set("Referrer-Policy", "strict-origin-when-cross-origin");
    h.set("X-Content-Type-Options", "nosniff");
    h.set("X-Frame-Options", "DENY");
    if (NO_STORE_PATHS.has(path)) h.set("Cache-Control", "no-store");
  });
};
