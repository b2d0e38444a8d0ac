// Issue 11: every answer carries the security headers (CSP with a per-request nonce for React
// Router's inline scripts, no framing, a referrer policy, nosniff); pages that show a secret
// once are not cached; cookie-authenticated API writes from another site are refused (403).
import { afterEach, expect, test } from "vitest";
import { RouterContextProvider } from "react-router";
import { resetEnvCache } from "~/env.server";
import { nonceContext, securityHeaders } from "~/http/security.server";
import * as root from "~/root";

afterEach(() => {
  delete process.env.BASEMAP_STYLE_URL;
  resetEnvCache();
});

async function run(request: Request, answer: () => Response = () => new Response("<!doctype html>", { headers: { "Content-Type": "text/html" } })) {
  const context = new RouterContextProvider();
  let called = false;
  const response = (await securityHeaders({ request, context, params: {} } as never, async () => {
    called = true;
    return answer();
  })) as Response;
  return { response, called, nonce: context.get(nonceContext) };
}

const cspOf = (r: Response) => Object.fromEntries((r.headers.get("Content-Security-Policy") ?? "").split(/;\s*/).map((d) => [d.split(" ")[0], d.split(" ").slice(1)]));

test("the root route runs the security middleware for every request", () => {
  expect(root.middleware).toContain(securityHeaders);
});

test("a page gets a CSP whose nonce is fresh per request, no framing, referrer policy and nosniff", async () => {
  const a = await run(new Request("http://localhost/review"));
  const b = await run(new Request("http://localhost/review"));
  expect(a.nonce).toMatch(/^[A-Za-z0-9+/]{22}==$/);
  expect(a.nonce).not.toBe(b.nonce);
  const csp = cspOf(a.response);
  expect(csp["script-src"]).toEqual(["'self'", `'nonce-${a.nonce}'`]);
  expect(csp["frame-ancestors"]).toEqual(["'none'"]);
  expect(csp["worker-src"]).toEqual(["'self'", "blob:"]);
  expect(csp["object-src"]).toEqual(["'none'"]);
  expect(csp["connect-src"]).toEqual(["'self'"]);
  expect(a.response.headers.get("Referrer-Policy")).toBe("strict-origin-when-cross-origin");
  expect(a.response.headers.get("X-Content-Type-Options")).toBe("nosniff");
  expect(a.response.headers.get("Cache-Control")).toBeNull();
});

test("resource routes and redirects carry the headers too; the basemap origin may be fetched", async () => {
  process.env.BASEMAP_STYLE_URL = "https://tiles.fernhollow.test/styles/survey/style.json";
  resetEnvCache();
  const json = await run(new Request("http://localhost/api/me"), () => Response.json({ ok: true }));
  expect(cspOf(json.response)["connect-src"]).toEqual(["'self'", "https://tiles.fernhollow.test"]);
  expect(json.response.headers.get("X-Content-Type-Options")).toBe("nosniff");
  const moved = await run(new Request("http://localhost/theme"), () => Response.redirect("http://localhost/", 302));
  expect(moved.response.status).toBe(302);
  expect(moved.response.headers.get("Content-Security-Policy")).toContain("frame-ancestors 'none'");
});

test("pages that show a secret once are never cached", async () => {
  for (const path of ["/login", "/login/code", "/auth/magic?t=x", "/admin/tokens", "/admin/tokens.data"]) {
    const { response } = await run(new Request(`http://localhost${path}`));
    expect(response.headers.get("Cache-Control"), path).toBe("no-store");
  }
});

test("a cookie-authenticated API write from another site is refused; same-site, GET and bearer calls pass", async () => {
  const post = (path: string, headers: Record<string, string>) => new Request(`http://localhost${path}`, { method: "POST", headers, body: "{}" });
  const cookie = { Cookie: "__shotbook=abc" };
  for (const headers of [
    { ...cookie, Origin: "https://evil.example" },
    { ...cookie, "Sec-Fetch-Site": "cross-site", Origin: "https://evil.example" },
    { ...cookie, "Sec-Fetch-Site": "same-site" },
  ]) {
    for (const path of ["/api/sync", "/api/shots/s1/exclusion", "/api/photos", "/review/import/chunk"]) {
      const r = await run(post(path, headers));
      expect(r.response.status, `${path} ${JSON.stringify(headers)}`).toBe(403);
      expect(r.called).toBe(false);
      expect(((await r.response.json()) as { error: string }).error).toMatch(/Cross-site request refused/);
    }
  }
  for (const headers of [
    { ...cookie, Origin: "http://localhost" },
    { ...cookie, "Sec-Fetch-Site": "same-origin", Origin: "http://localhost" },
    { ...cookie, Origin: "https://evil.example", Authorization: "Bearer sbk_x" },
    { Origin: "https://evil.example" }, // no cookie: nothing to ride on; the guard answers 401
    cookie, // no Origin and no Sec-Fetch-Site: not a browser
  ]) {
    expect((await run(post("/api/sync", headers))).called, JSON.stringify(headers)).toBe(true);
  }
  const get = new Request("http://localhost/api/me", { headers: { ...cookie, "Sec-Fetch-Site": "cross-site" } });
  expect((await run(get)).called).toBe(true);
});
