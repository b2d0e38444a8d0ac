import { afterAll, beforeAll, expect, test } from "vitest";
import type { Browser } from "playwright-core";
import { baseURL, launchBrowser, newContext, seriousA11yViolations, signInAs } from "./helpers";

let browser: Browser;
beforeAll(async () => {
  browser = await launchBrowser();
});
afterAll(async () => {
  await browser?.close();
});

test("healthz answers from the built server", async () => {
  const res = await fetch(`${baseURL()}/healthz`);
  expect(res.status).toBe(200);
  expect(await res.json()).toEqual({ ok: true });
});

test("the shell renders with the app's own font file and no font CDN", async () => {
  const context = await newContext(browser);
  const page = await context.newPage();
  const fontRequests: string[] = [];
  page.on("request", (r) => {
    if (r.resourceType() === "font") fontRequests.push(r.url());
  });
  await page.goto("/");
  expect(await page.locator("header").getByText("Shotbook").first().isVisible()).toBe(true);
  expect(await page.locator("h1").textContent()).toContain("Shotbook");
  await page.evaluate(() => document.fonts.ready);
  const family = await page.evaluate(() => getComputedStyle(document.body).fontFamily);
  expect(family).toContain("Atkinson Hyperlegible");
  const loaded = await page.evaluate(() => [...document.fonts].filter((f) => f.status === "loaded").map((f) => f.family));
  expect(loaded.join(",")).toContain("Atkinson Hyperlegible");
  expect(fontRequests.length).toBeGreaterThan(0);
  for (const url of fontRequests) expect(url.startsWith(baseURL())).toBe(true);
  const font = await fetch(fontRequests[0]!);
  expect(font.status).toBe(200);
  expect(font.headers.get("content-type") ?? "").toMatch(/font|woff/);
  await context.close();
});

test("the theme switch turns the dark theme on and keeps it across pages", async () => {
  const context = await newContext(browser);
  const page = await context.newPage();
  await page.goto("/");
  expect(await page.evaluate(() => document.documentElement.className)).not.toContain("dark");
  await page.getByRole("button", { name: "Switch to dark theme" }).click();
  await page.waitForFunction(() => document.documentElement.classList.contains("dark"));
  await page.goto("/");
  expect(await page.evaluate(() => document.documentElement.classList.contains("dark"))).toBe(true);
  await context.close();
});

test("a signed-in admin sees the three work areas and their name", async () => {
  const context = await newContext(browser);
  await signInAs(context, "admin@e2e.test");
  const page = await context.newPage();
  await page.goto("/");
  const nav = page.getByRole("navigation", { name: "Work areas" });
  for (const area of ["Field", "Review", "Admin"]) {
    expect(await nav.getByRole("link", { name: area }).count()).toBe(1);
  }
  expect(await page.getByTestId("signed-in-user").textContent()).toContain("Test Admin");
  await context.close();
});

test("the start page has no serious accessibility violations in either theme", async () => {
  const context = await newContext(browser);
  const page = await context.newPage();
  await page.goto("/");
  expect(await seriousA11yViolations(page)).toEqual([]);
  await page.getByRole("button", { name: "Switch to dark theme" }).click();
  await page.waitForFunction(() => document.documentElement.classList.contains("dark"));
  expect(await seriousA11yViolations(page)).toEqual([]);
  await context.close();
});

test("an unknown address answers 404 with a page that says so", async () => {
  const context = await newContext(browser);
  const page = await context.newPage();
  const res = await page.goto("/no-such-page");
  expect(res?.status()).toBe(404);
  expect(await page.locator("h1").textContent()).toBe("Page not found");
  await context.close();
});
