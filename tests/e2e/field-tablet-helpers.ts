// Helpers of the tablet's browser tests (field-tablet.e2e.ts; issue 13: moved out of it): open
// /field ready offline, wait for the outbox to drain, read the tablet's queue and the server's
// sessions, measure what is in view and which touch targets are too small.
import { expect } from "vitest";
import type { BrowserContext, Locator, Page } from "playwright-core";
import { useServerEnv } from "./helpers";

export function watch(page: Page) {
  page.on("pageerror", (e) => console.warn("pageerror:", e.message));
  if (process.env.DEBUG_FIELD) {
    page.on("response", (r) => r.status() >= 400 && console.warn("response", r.status(), r.url()));
    page.on("console", (m) => console.warn("console", m.type(), m.text()));
  }
}

/** Opens /field online and waits for the header's own "Ready to work offline" (nothing hidden). */
export async function openReady(context: BrowserContext): Promise<Page> {
  const page = await context.newPage();
  watch(page);
  await page.goto("/field");
  await page.locator('[data-testid="offline-ready"][data-ready="true"]').waitFor({ timeout: 30_000 });
  return page;
}

/** Waits for an empty outbox; on a timeout, says what the tablet thought (reach, sync status). */
export async function drained(page: Page, timeout = 30_000) {
  try {
    await page.waitForFunction(() => document.querySelector('[data-testid="outbox-summary"]')?.textContent?.startsWith("Nothing waiting"), undefined, { timeout });
  } catch (e) {
    const st = await page.evaluate(async () => ({
      reach: document.querySelector("[data-reach]")?.getAttribute("data-reach"),
      summary: document.querySelector('[data-testid="outbox-summary"]')?.textContent,
      status: await (window.shotbookField as { syncStatus(): Promise<unknown> }).syncStatus(),
      locks: await navigator.locks.query(),
    }));
    throw new Error(`outbox not drained: ${JSON.stringify(st)}`, { cause: e });
  }
}

export async function queuedShotCount(page: Page, sessionId: string) {
  return page.evaluate(async (id) => {
    const db = (window.shotbookField as { db: { shots: { where(k: string): { equals(v: string): { count(): Promise<number> } } } } }).db;
    return db.shots.where("sessionId").equals(id).count();
  }, sessionId);
}

export async function serverHasSession(id: string) {
  useServerEnv();
  const { getDb } = await import("~/db/client.server");
  const { checkSessions } = await import("~/db/schema");
  const { eq } = await import("drizzle-orm");
  const rows = await getDb().select({ id: checkSessions.id }).from(checkSessions).where(eq(checkSessions.id, id));
  return rows.length > 0;
}

export async function inViewport(page: Page, locator: Locator) {
  const box = await locator.boundingBox();
  const vp = page.viewportSize()!;
  expect(box, "element is laid out").not.toBeNull();
  return { box: box!, inside: box!.y >= 0 && box!.x >= 0 && box!.y + box!.height <= vp.height && box!.x + box!.width <= vp.width };
}

export async function smallTargets(page: Page) {
  return page.evaluate(() => {
    const out: string[] = [];
    const sel = "header a, header button, main a, main button, main select, main input, main textarea, [data-testid=field-status] a";
    for (const el of Array.from(document.querySelectorAll<HTMLElement>(sel))) {
      const target = el instanceof HTMLInputElement && (el.type === "radio" || el.type === "checkbox") ? (el.closest("label") ?? el) : el;
      const r = target.getBoundingClientRect();
      if (r.width === 0 || r.height === 0 || getComputedStyle(target).visibility === "hidden") continue;
      if (r.height < 44 - 0.5 || r.width < 44 - 0.5) out.push(`${target.tagName.toLowerCase()} "${(target.textContent ?? "").trim().slice(0, 40)}" ${Math.round(r.width)}×${Math.round(r.height)}`);
    }
    return out;
  });
}
