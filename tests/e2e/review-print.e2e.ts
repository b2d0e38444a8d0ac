// Issue 12, review side, in a real Chromium against the built server: every interactive element
// of the review screens and the shell header is a 44 px touch target (or spaced like one); times
// show in the device's own zone with its offset; the printed report (Chromium's print-to-PDF)
// numbers its pages "page n of N", keeps the reflectance × illuminance matrix and starts with a
// full first page. With REVIEW_SCREENSHOTS=<dir> the PDF pages are also saved as PNGs to look at.
import { execFileSync } from "node:child_process";
import { existsSync, mkdirSync, rmSync, writeFileSync } from "node:fs";
import { join, resolve } from "node:path";
import { afterAll, beforeAll, expect, test } from "vitest";
import type { Browser, BrowserContext, Page } from "playwright-core";
import { launchBrowser, signInAs, useServerEnv, baseURL } from "./helpers";
import type { ReviewWorld } from "../support/review-fixtures";

let browser: Browser;
let w: ReviewWorld;
let wrap: { sensor: { id: string }; wrapShotId: string };
const SHOTS = process.env.REVIEW_SCREENSHOTS;
const TMP = resolve(`tests/.tmp/review-print-${process.pid}`);

beforeAll(async () => {
  useServerEnv();
  const { reviewWorld, addWrapSensor } = await import("../support/review-fixtures");
  w = await reviewWorld();
  wrap = await addWrapSensor(w);
  browser = await launchBrowser();
  mkdirSync(TMP, { recursive: true });
  if (SHOTS) mkdirSync(SHOTS, { recursive: true });
});
afterAll(async () => {
  await browser?.close();
  rmSync(TMP, { recursive: true, force: true });
  // the e2e database is shared by the test files: retire this file's sensors so the overview of
  // the next file lists only its own (shots of retired sensors stay, as in the product)
  if (w) {
    const { getDb } = await import("~/db/client.server");
    const { sensors } = await import("~/db/schema");
    const { inArray } = await import("drizzle-orm");
    const at = new Date().toISOString();
    await getDb()
      .update(sensors)
      .set({ retiredAt: at, updatedAt: at })
      .where(inArray(sensors.id, [w.failing.id, w.passing.id, ...(wrap ? [wrap.sensor.id] : [])]));
  }
});

async function as(email: string, opts: { viewport?: { width: number; height: number }; timezoneId?: string } = {}): Promise<{ context: BrowserContext; page: Page }> {
  const context = await browser.newContext({ baseURL: baseURL(), viewport: opts.viewport ?? { width: 1280, height: 900 }, timezoneId: opts.timezoneId ?? "UTC" });
  await signInAs(context, email);
  return { context, page: await context.newPage() };
}

type Small = { what: string; width: number; height: number };

/**
 * Interactive elements smaller than 44 × 44 CSS px (WCAG 2.5.5, target size, enhanced) that are
 * not spaced like one: the spacing rule of WCAG 2.5.8 with a 44 px circle instead of 24 px (a
 * circle of 44 px centred on the target touches no other target nor another small target's
 * circle). A checkbox or radio inside its label is measured by the label; links inside running
 * text are exempt (the "inline" exception); hidden and screen-reader-only elements are skipped.
 */
async function smallTargets(page: Page): Promise<Small[]> {
  return page.evaluate(() => {
    const SEL = 'a[href], button, input:not([type="hidden"]), select, textarea, summary, [role="button"], [role="link"]';
    type T = { el: Element; r: DOMRect; what: string };
    const targets: T[] = [];
    const seen = new Set<Element>();
    for (const el of document.querySelectorAll(SEL)) {
      const t = (el.matches('input[type="checkbox"], input[type="radio"]') && el.closest("label")) || el;
      if (seen.has(t)) continue;
      seen.add(t);
      const r = t.getBoundingClientRect();
      const cs = getComputedStyle(t);
      if (r.width <= 1 || r.height <= 1 || cs.visibility === "hidden" || cs.display === "none" || (t as HTMLElement).closest("[hidden], [inert]")) continue;
      // inline exception: a link that is part of a sentence
      if (cs.display === "inline" && t.parentElement && [...t.parentElement.childNodes].some((n) => n !== t && n.nodeType === Node.TEXT_NODE && n.textContent!.trim().length > 0)) continue;
      const label = (t.getAttribute("aria-label") || t.textContent || (t as HTMLInputElement).name || t.tagName).trim().replace(/\s+/g, " ").slice(0, 40);
      targets.push({ el: t, r, what: `${t.tagName.toLowerCase()} “${label}”` });
    }
    const small = targets.filter((t) => t.r.width < 43.5 || t.r.height < 43.5);
    const centre = (r: DOMRect) => ({ x: r.left + r.width / 2, y: r.top + r.height / 2 });
    const distToRect = (p: { x: number; y: number }, r: DOMRect) => Math.hypot(Math.max(r.left - p.x, 0, p.x - r.right), Math.max(r.top - p.y, 0, p.y - r.bottom));
    return small
      .filter((s) => {
        const c = centre(s.r);
        const touchesTarget = targets.some((o) => o !== s && !o.el.contains(s.el) && !s.el.contains(o.el) && distToRect(c, o.r) < 22);
        const touchesCircle = small.some((o) => o !== s && Math.hypot(centre(o.r).x - c.x, centre(o.r).y - c.y) < 44);
        return touchesTarget || touchesCircle;
      })
      .map((s) => ({ what: s.what, width: Math.round(s.r.width), height: Math.round(s.r.height) }));
  });
}

test("every interactive element of the review screens and the shell header is a 44 px touch target", async () => {
  for (const viewport of [
    { width: 1280, height: 900 },
    { width: 820, height: 1180 },
  ]) {
    const { context, page } = await as(w.users.qa.email, { viewport });
    const screens: [string, string, () => Promise<unknown>][] = [
      ["overview", "/review", () => page.getByTestId("sensor-overview").waitFor()],
      ["report", `/review/sensors/${w.failing.id}`, () => page.getByTestId("shot-table").waitFor()],
      ["map", `/review/sensors/${w.failing.id}/map`, () => page.locator('[data-map-ready="true"]').waitFor({ timeout: 30_000 })],
      ["print", `/review/sensors/${w.failing.id}/print`, () => page.getByTestId("print-report").waitFor()],
      ["import", "/review/import", () => page.getByLabel("Sensor").waitFor()],
    ];
    const found: Record<string, Small[]> = {};
    for (const [name, path, ready] of screens) {
      await page.goto(path);
      await ready();
      const small = await smallTargets(page);
      if (small.length) found[`${name} @ ${viewport.width}px`] = small;
    }
    expect(found).toEqual({});
    await context.close();
  }
}, 240_000);

test("review times are shown in the device's local time with its offset, after the page hydrates", async () => {
  // St. John's keeps UTC−02:30 in May: an offset no one could mistake for UTC or the server's zone
  const { context, page } = await as(w.users.qa.email, { timezoneId: "America/St_Johns" });
  // the server renders UTC and the browser switches after hydration: React must not see a mismatch
  const mismatches: string[] = [];
  page.on("console", (m) => {
    if (m.type() === "error" && /hydrat|did not match/i.test(m.text())) mismatches.push(m.text());
  });
  page.on("pageerror", (e) => {
    if (/hydrat|#418|#423|#425/i.test(e.message)) mismatches.push(e.message);
  });
  await page.goto("/review");
  const row = page.getByTestId("sensor-overview").locator(`tr[data-sensor="${w.failing.id}"]`);
  await row.locator('time[data-local-time="local"]').first().waitFor();
  // the expected text from ICU's zone data (Intl), not from the app's own formatter
  const last = w
    .shotsOf(w.failing.id)
    .map((s) => s.takenAt)
    .sort((a, b) => Date.parse(a) - Date.parse(b))
    .at(-1)!;
  const parts = Object.fromEntries(
    new Intl.DateTimeFormat("en-CA", { timeZone: "America/St_Johns", year: "numeric", month: "2-digit", day: "2-digit", hour: "2-digit", minute: "2-digit", hourCycle: "h23" })
      .formatToParts(new Date(last))
      .map((p) => [p.type, p.value]),
  );
  expect(await row.locator("time").first().textContent()).toBe(`${parts.year}-${parts.month}-${parts.day} ${parts.hour}:${parts.minute} UTC−02:30`);
  await page.goto(`/review/sensors/${w.failing.id}`);
  const first = page.getByTestId("shot-table").locator("tbody tr[data-shot] time").first();
  await first.waitFor();
  expect(await first.textContent()).toMatch(/^2026-05-0[45] \d\d:\d\d UTC−02:30$/);
  await page.goto(`/review/sensors/${w.failing.id}/print`);
  await page.locator('[data-testid="print-generated"] time[data-local-time="local"]').waitFor();
  expect(await page.getByTestId("print-generated").textContent()).toMatch(/Generated \d{4}-\d\d-\d\d \d\d:\d\d UTC−0[23]:30 by/);
  expect(mismatches).toEqual([]);
  await context.close();
});

function pdfPages(file: string): string[] {
  return execFileSync("pdftotext", ["-layout", file, "-"], { encoding: "utf8" }).split("\f").slice(0, -1);
}

async function printToPdf(page: Page, path: string, name: string) {
  await page.goto(path);
  await page.getByTestId("print-report").waitFor();
  // the charts are drawn in the browser: wait for all of them (error, matrix, bias per session)
  await page.waitForFunction(() => document.querySelectorAll('[data-testid="print-report"] figure svg[aria-hidden="true"]').length >= 3);
  const file = join(TMP, `${name}.pdf`);
  writeFileSync(file, await page.pdf({ preferCSSPageSize: true, printBackground: true }));
  return file;
}

test("the printed report numbers its pages, keeps the matrix and the verdict's reasons, and fills its first page", async () => {
  if (!existsSync("/usr/bin/pdftotext")) throw new Error("pdftotext missing: apt-get install -y poppler-utils");
  const { context, page } = await as(w.users.qa.email);
  for (const [name, id] of [
    ["failing", w.failing.id],
    ["wrap", wrap.sensor.id],
  ] as const) {
    const file = await printToPdf(page, `/review/sensors/${id}/print`, `print-${name}`);
    const pages = pdfPages(file);
    const N = pages.length;
    expect(N).toBeGreaterThan(1);
    pages.forEach((text, i) => {
      expect(text, `page ${i + 1}`).toMatch(new RegExp(`page ${i + 1} of ${N}`));
      // no near-empty page: each carries more than its running header and footer
      expect(
        text
          .replace(/page \d+ of \d+/, "")
          .replace(/\s+/g, " ")
          .trim().length,
        `text on page ${i + 1}`,
      ).toBeGreaterThan(300);
    });
    // the first page holds the header, the verdict with its reasons and the four tests
    expect(pages[0]).toMatch(/Range verification report/);
    expect(pages[0]).toMatch(/Verdict/);
    // the accuracy statement (ranging.md §7) leads, then the rule and its tests start on page 1
    expect(pages[0]).toMatch(/Acceptance rule and tests/);
    expect(pages.join("\n")).toMatch(/Shot count/);
    const all = pages.join("\n");
    expect(all).toMatch(/Bias by reflectance × illuminance/);
    if (name === "wrap") expect(all.replace(/\s+/g, " ")).toMatch(/1 shot flagged wrap \(−29\s?953 mm\) drives the bias/);
    if (SHOTS) {
      execFileSync("pdftoppm", ["-png", "-r", "70", file, join(SHOTS, `print-${name}-pdf`)]);
    }
  }
  await context.close();
}, 120_000);

test.runIf(!!SHOTS)(
  "screenshots of the overview, the reports and the printed pages in both themes",
  async () => {
    const { context, page } = await as(w.users.qa.email, { viewport: { width: 1180, height: 820 }, timezoneId: "Europe/Berlin" });
    for (const theme of ["light", "dark"]) {
      if (theme === "dark") {
        await page.goto("/review");
        await page.getByRole("button", { name: "Switch to dark theme" }).click();
        await page.waitForFunction(() => document.documentElement.classList.contains("dark"));
      }
      for (const [name, path, testId] of [
        ["overview", "/review", "sensor-overview"],
        ["report-failing", `/review/sensors/${w.failing.id}`, "shot-table"],
        ["report-wrap", `/review/sensors/${wrap.sensor.id}`, "shot-table"],
        ["print-wrap", `/review/sensors/${wrap.sensor.id}/print`, "print-report"],
      ] as const) {
        await page.goto(path);
        await page.getByTestId(testId).waitFor();
        await page.waitForTimeout(900);
        await page.screenshot({ path: join(SHOTS!, `${name}-${theme}.png`), fullPage: true });
        // the top and the charts of a long page at full size, for a person to read
        const height = await page.evaluate(() => document.documentElement.scrollHeight);
        for (const [part, y] of [
          ["top", 0],
          ["charts", 1250],
        ] as const) {
          if (y < height) await page.screenshot({ path: join(SHOTS!, `${name}-${theme}-${part}.png`), fullPage: true, clip: { x: 0, y, width: 1180, height: Math.min(1250, height - y) } });
        }
      }
      const file = await printToPdf(page, `/review/sensors/${wrap.sensor.id}/print`, `print-${theme}`);
      execFileSync("pdftoppm", ["-png", "-r", "70", file, join(SHOTS!, `pdf-${theme}`)]);
    }
    await context.close();
  },
  240_000,
);
