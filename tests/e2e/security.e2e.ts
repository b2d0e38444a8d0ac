// Issue 11 in a real Chromium against the built server: pages carry the security headers, and
// with the Content-Security-Policy in force nothing is blocked — React Router's inline scripts
// (nonce), the theme switch, the field screens with their service worker and the MapLibre map
// (worker from a blob: URL) all still work, with no CSP violation reported.
import { afterAll, beforeAll, expect, test } from "vitest";
import type { Browser, BrowserContext, Page } from "playwright-core";
import { baseURL, launchBrowser, newContext, signInAs, useServerEnv } from "./helpers";
import type { ReviewWorld } from "../support/review-fixtures";

let browser: Browser;
let w: ReviewWorld;

beforeAll(async () => {
  useServerEnv();
  const { reviewWorld } = await import("../support/review-fixtures");
  w = await reviewWorld();
  browser = await launchBrowser();
});
afterAll(async () => {
  await browser?.close();
});

type Watch = { violations: string[]; cspConsole: string[]; errors: string[] };

/** A page that records CSP violations (event and console) and every console error. */
async function watchedPage(context: BrowserContext): Promise<{ page: Page; watch: Watch }> {
  const watch: Watch = { violations: [], cspConsole: [], errors: [] };
  await context.exposeBinding("__reportCsp", (_source, text: string) => void watch.violations.push(text));
  await context.addInitScript(() => {
    document.addEventListener("securitypolicyviolation", (e) => {
      (window as unknown as { __reportCsp(t: string): void }).__reportCsp(`${e.violatedDirective} ${e.blockedURI} ${location.pathname}`);
    });
  });
  const page = await context.newPage();
  page.on("console", (m) => {
    if (m.type() !== "error") return;
    watch.errors.push(m.text());
    if (/Content Security Policy|Refused to/i.test(m.text())) watch.cspConsole.push(m.text());
  });
  page.on("pageerror", (e) => watch.errors.push(`pageerror: ${e.message}`));
  return { page, watch };
}

function expectClean(watch: Watch) {
  if (watch.errors.length) console.warn("console errors seen:", watch.errors);
  expect(watch.violations).toEqual([]);
  expect(watch.cspConsole).toEqual([]);
}

test("the sign-in page has the headers; it hydrates under the CSP and the theme switch works", async () => {
  const res = await fetch(`${baseURL()}/login`);
  const csp = res.headers.get("content-security-policy") ?? "";
  expect(csp).toMatch(/script-src 'self' 'nonce-[A-Za-z0-9+/=]+'/);
  expect(csp).toContain("frame-ancestors 'none'");
  expect(res.headers.get("referrer-policy")).toBe("strict-origin-when-cross-origin");
  expect(res.headers.get("x-content-type-options")).toBe("nosniff");
  expect(res.headers.get("cache-control")).toBe("no-store");
  const nonce = csp.match(/'nonce-([^']+)'/)![1]!;
  const html = await res.text();
  // Every inline script carries this request's nonce.
  const inline = [...html.matchAll(/<script(?![^>]*\bsrc=)([^>]*)>/g)].map((m) => m[1]!);
  expect(inline.length).toBeGreaterThan(0);
  for (const attrs of inline) expect(attrs).toContain(`nonce="${nonce}"`);
  const api = await fetch(`${baseURL()}/api/me`);
  expect(api.headers.get("content-security-policy")).toContain("frame-ancestors 'none'");

  const context = await newContext(browser);
  const { page, watch } = await watchedPage(context);
  await page.goto("/login");
  // Hydrated: React Router's client router exists only if its inline scripts ran.
  await page.waitForFunction(() => Boolean((window as unknown as { __reactRouterRouteModules?: unknown }).__reactRouterRouteModules));
  await page.getByRole("button", { name: "Switch to dark theme" }).click();
  await page.waitForFunction(() => document.documentElement.classList.contains("dark"));
  await page.goto("/");
  expect(await page.evaluate(() => document.documentElement.classList.contains("dark"))).toBe(true);
  expectClean(watch);
  await context.close();
});

test("the field screens load and the service worker registers under the CSP", async () => {
  const context = await newContext(browser);
  await signInAs(context, w.users.crew.email);
  const { page, watch } = await watchedPage(context);
  await page.goto("/field");
  await page.evaluate(async () => {
    await navigator.serviceWorker.ready;
  });
  expect(await page.evaluate(() => Boolean(navigator.serviceWorker.controller) || navigator.serviceWorker.ready.then((r) => Boolean(r.active)))).toBe(true);
  await page.goto("/field/outbox");
  // the field screens poll the server for reachability, so the network is never idle for long:
  // wait for the outbox to draw, then give any late policy violation a moment to be reported
  await page.getByTestId("outbox-summary").waitFor();
  await page.waitForTimeout(1500);
  expectClean(watch);
  await context.close();
});

test("the review pages and the MapLibre range-error map draw under the CSP", async () => {
  const context = await newContext(browser);
  await signInAs(context, w.users.qa.email);
  const { page, watch } = await watchedPage(context);
  await page.goto("/review");
  await page.goto(`/review/sensors/${w.failing.id}`);
  await page.getByTestId("tests-table").waitFor();
  await page.goto(`/review/sensors/${w.failing.id}/map`);
  await page.locator('[data-map-ready="true"]').waitFor({ timeout: 30_000 });
  await page.getByTestId("map-legend").waitFor();
  if (process.env.SECURITY_SCREENSHOTS) await page.screenshot({ path: `${process.env.SECURITY_SCREENSHOTS}/map-under-csp.png` });
  expectClean(watch);
  await context.close();
});

test("a new API token page is not cached", async () => {
  const context = await newContext(browser);
  await signInAs(context, w.users.admin.email);
  const page = await context.newPage();
  const res = await page.goto("/admin/tokens");
  expect(res!.headers()["cache-control"]).toBe("no-store");
  await context.close();
});
