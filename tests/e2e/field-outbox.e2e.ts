// The field outbox's delivery in real Chromium: a big outbox drains in batches with a progress bar,
// a failing server loses nothing, an expired sign-in pauses sending until the crew signs in again.
import { expect, test } from "vitest";
import { newContext, signInAs } from "./helpers";
import { serverShotCount } from "./field-fixtures";
import { drained } from "./field-tablet-helpers";
import { fieldSuite, openFieldOnline, outboxTotal, queueShots } from "../support/field-online";

const suite = fieldSuite("Outbox");

test("2,000 queued shots survive a reload and sync in batches of at most 500 with the progress bar advancing", async () => {
  const context = await newContext(suite.browser);
  await signInAs(context, "crew@e2e.test");
  const page = await openFieldOnline(context);
  suite.net.setOnline(false);
  const sessionId = await queueShots(page, suite.world, 2000);
  await page.goto("/field/outbox");
  await page.getByTestId("outbox-summary").waitFor();
  expect(await page.getByTestId("outbox-summary").textContent()).toBe("Waiting: 1 session, 2,000 shots, 0 photos.");
  expect(await outboxTotal(page)).toBe(2001);

  const batches: number[] = [];
  page.on("request", (req) => {
    if (req.url().endsWith("/api/sync") && req.method() === "POST") batches.push((JSON.parse(req.postData() ?? "{}") as { shots: unknown[] }).shots.length);
  });
  await page.evaluate(() => {
    const w = window as unknown as { __progress: number[] };
    w.__progress = [];
    setInterval(() => {
      const el = document.querySelector<HTMLProgressElement>('[data-testid="sync-progress"]');
      if (el && el.value !== w.__progress[w.__progress.length - 1]) w.__progress.push(el.value);
    }, 5);
  });
  suite.net.setOnline(true);
  await drained(page, 60_000);
  const progress = await page.evaluate(() => (window as unknown as { __progress: number[] }).__progress);
  console.info("progress values seen:", progress.join(", "), "| shots per request:", batches.join(", "));
  expect(batches.length).toBeGreaterThanOrEqual(4);
  expect(Math.max(...batches)).toBeLessThanOrEqual(500);
  expect(batches.reduce((a, b) => a + b, 0)).toBe(2000);
  // The bar moved through intermediate values, never backwards.
  const inner = progress.filter((v) => v > 0 && v < 2001);
  expect(inner.length).toBeGreaterThanOrEqual(2);
  for (let i = 1; i < progress.length; i++) expect(progress[i]!).toBeGreaterThanOrEqual(progress[i - 1]!);
  expect(await serverShotCount(sessionId)).toBe(2000);
  await context.close();
}, 240_000);

test("a server that answers 500 mid-sync loses nothing: the rest stays queued and goes out later", async () => {
  const context = await newContext(suite.browser);
  await signInAs(context, "crew@e2e.test");
  const page = await openFieldOnline(context);
  suite.net.setOnline(false);
  const sessionId = await queueShots(page, suite.world, 1200);
  let calls = 0;
  let failing = true;
  await context.route("**/api/sync", async (route) => {
    calls++;
    if (failing && calls >= 2) return route.fulfill({ status: 500, contentType: "application/json", body: '{"error":"database restarting"}' });
    return route.continue();
  });
  await page.goto("/field/outbox");
  await page.getByTestId("outbox-summary").waitFor();
  suite.net.setOnline(true);
  // First batch in, the second fails on every try; the run gives up and says so.
  await page.waitForFunction(() => document.body.textContent?.includes("The server answered 500"), undefined, { timeout: 60_000 });
  await page.waitForFunction(() => document.querySelector("button.btn")?.textContent === "Sync now", undefined, { timeout: 60_000 });
  expect(await serverShotCount(sessionId)).toBe(499); // the first batch: the session and 499 shots
  expect(await outboxTotal(page)).toBe(701);
  failing = false;
  await page.getByRole("button", { name: "Sync now" }).click();
  await drained(page, 60_000);
  expect(await serverShotCount(sessionId)).toBe(1200);
  await context.close();
}, 240_000);

test("an expired sign-in pauses sending with a sign-in link; after signing in, the queue goes out", async () => {
  const context = await newContext(suite.browser);
  const user = await signInAs(context, "crew@e2e.test");
  const page = await openFieldOnline(context);
  suite.net.setOnline(false);
  const sessionId = await queueShots(page, suite.world, 3);
  // The sign-in ends while the tablet is away.
  const { getDb } = await import("~/db/client.server");
  const { authSessions } = await import("~/db/schema");
  const { eq } = await import("drizzle-orm");
  await getDb().update(authSessions).set({ revokedAt: new Date().toISOString() }).where(eq(authSessions.userId, user.id));
  await page.goto("/field/outbox");
  suite.net.setOnline(true);
  const link = page.getByTestId("sign-in-to-send");
  await link.waitFor({ timeout: 30_000 });
  expect(await link.getAttribute("href")).toBe("/login?redirectTo=%2Ffield%2Foutbox");
  expect(await outboxTotal(page)).toBe(4);
  await signInAs(context, "crew@e2e.test");
  await page.goto("/field/outbox");
  await drained(page, 30_000);
  expect(await serverShotCount(sessionId)).toBe(3);
  await context.close();
});
