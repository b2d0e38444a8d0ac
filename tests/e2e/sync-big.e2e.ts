// A week's worth of shots synced at once (issue 12: "no UI freeze after a 1,000+ record sync"),
// in real Chromium with the network cut for real (tests/support/net-proxy.ts): 1,200 shots are
// queued offline in one session, the network returns, the outbox drains while the session
// screen is open, and the outbox and the server agree on the counts afterwards. The page's long
// tasks (PerformanceObserver 'longtask') are printed for the record, never asserted: speed is
// measured, not tested (DEVELOPERS.md).
import { afterAll, beforeAll, beforeEach, expect, test } from "vitest";
import type { Browser, Page } from "playwright-core";
import { launchBrowser, newContext, signInAs } from "./helpers";
import { fieldWorld, serverShotCount, type FieldWorld } from "./field-fixtures";
import { startNetProxy, type NetProxy } from "../support/net-proxy";

const N = 1200;

let browser: Browser;
let world: FieldWorld;
let net: NetProxy;

beforeAll(async () => {
  net = await startNetProxy();
  browser = await launchBrowser({ proxy: net });
  world = await fieldWorld("Big sync");
});
beforeEach(() => {
  net.setOnline(true);
});
afterAll(async () => {
  await browser?.close();
  await net?.close();
});

// The page's Dexie database, reached through the window hook the field screens expose to tests.
// eslint-disable-next-line @typescript-eslint/no-explicit-any
type Win = { __longTasks: number[]; shotbookField: { db: any } };

async function longTasks(page: Page) {
  return page.evaluate(() => {
    const l = (window as unknown as Win).__longTasks;
    return { count: l.length, longest: Math.round(Math.max(0, ...l)), total: Math.round(l.reduce((a, b) => a + b, 0)) };
  });
}

test(`${N.toLocaleString("en-GB")} queued shots sync from the session screen; the outbox and the server count them once each`, async () => {
  const context = await newContext(browser, { viewport: { width: 1280, height: 800 } });
  await context.addInitScript(() => {
    const w = window as unknown as Win;
    w.__longTasks = [];
    try {
      new PerformanceObserver((list) => {
        for (const e of list.getEntries()) w.__longTasks.push(e.duration);
      }).observe({ type: "longtask", buffered: true });
    } catch {}
  });
  await signInAs(context, "crew@e2e.test");
  const page = await context.newPage();
  page.on("pageerror", (e) => console.warn("pageerror:", e.message));
  await page.goto("/field");
  await page.locator('[data-testid="offline-ready"][data-ready="true"]').waitFor({ timeout: 30_000 });

  net.setOnline(false);
  await page.getByLabel("Sensor", { exact: true }).selectOption(world.sensor.id);
  await page.getByLabel("Site", { exact: true }).selectOption(world.site.id);
  await page.getByRole("button", { name: "Start session" }).click();
  await page.waitForURL(/\/field\/session\/[0-9a-f-]{36}$/);
  const sessionId = page.url().split("/").pop()!;
  await page.getByRole("combobox", { name: /^Target/ }).selectOption(world.site.targets[1]!.id);
  await page.getByLabel("EDM", { exact: true }).check();
  await page.getByLabel("Sensor range (m)").fill("25.004");
  await page.getByRole("button", { name: "Save shot" }).click();
  await page.getByText("Saved on this tablet").waitFor();

  // The other 1,199 as copies of the first with their own ids and readings, straight into the queue.
  await page.evaluate(
    async ({ sid, n }) => {
      const db = (window as unknown as Win).shotbookField.db;
      const first = await db.shots.where("sessionId").equals(sid).first();
      const rows = [];
      for (let i = 1; i < n; i++) {
        const id = crypto.randomUUID();
        const range = 25 + ((i % 17) - 8) / 1000;
        rows.push({
          ...first,
          id,
          queuedAt: first.queuedAt + i,
          record: { ...first.record, id, readings: { rangesM: [range] } },
          preview: first.preview ? { ...first.preview, rangeM: range, errorMm: (range - first.preview.referenceM) * 1000 } : null,
        });
      }
      await db.shots.bulkAdd(rows);
    },
    { sid: sessionId, n: N },
  );
  // The session screen as the crew has it, every shot listed, before the network returns.
  await page.reload();
  await page.getByRole("heading", { name: new RegExp(`Shots in this session \\(${N}\\)`) }).waitFor({ timeout: 30_000 });
  await page.waitForTimeout(500);
  const beforeSync = await longTasks(page);
  await page.evaluate(() => {
    (window as unknown as Win).__longTasks = [];
  });

  const cdp = process.env.SYNC_PROFILE ? await context.newCDPSession(page) : null;
  if (cdp) {
    await cdp.send("Profiler.enable");
    await cdp.send("Profiler.start");
  }
  net.setOnline(true);
  await page.waitForFunction(async (sid) => (await (window as unknown as Win).shotbookField.db.shots.where("[sessionId+state]").equals([sid, "synced"]).count()) === 1200, sessionId, {
    timeout: 120_000,
    polling: 500,
  });
  await page
    .waitForFunction(() => document.querySelector('[data-testid="outbox-count"]')?.textContent === "Outbox: nothing waiting", undefined, { timeout: 30_000 })
    .catch(async (e) => {
      throw new Error(`status line: ${await page.getByTestId("field-status").textContent()}`, { cause: e });
    });
  await page.waitForTimeout(500);
  const duringSync = await longTasks(page);
  if (cdp) {
    const { profile } = (await cdp.send("Profiler.stop")) as {
      profile: { nodes: { id: number; callFrame: { functionName: string; url: string; lineNumber: number; columnNumber: number }; hitCount?: number }[]; samples: number[]; timeDeltas: number[] };
    };
    const self = new Map<string, number>();
    const byId = new Map(profile.nodes.map((n) => [n.id, n]));
    profile.samples.forEach((id, i) => {
      const f = byId.get(id)!.callFrame;
      const k = `${f.functionName || "(anon)"} ${f.url.split("/").pop()}:${f.lineNumber}:${f.columnNumber}`;
      self.set(k, (self.get(k) ?? 0) + (profile.timeDeltas[i] ?? 0) / 1000);
    });
    console.info(
      [...self]
        .sort((a, b) => b[1] - a[1])
        .slice(0, 30)
        .map(([k, v]) => `${v.toFixed(0)} ms ${k}`)
        .join("\n"),
    );
  }
  console.info(`long tasks while the session screen rendered ${N} shots: ${JSON.stringify(beforeSync)}; during the sync: ${JSON.stringify(duringSync)} (ms)`);

  expect(await serverShotCount(sessionId)).toBe(N);
  // The session screen draws the latest hundred, every one of them synced, and says so.
  expect(await page.getByTestId("shots-hidden").textContent()).toContain(`Showing the latest 100 of ${N.toLocaleString("en-GB")} shots.`);
  expect(await page.locator('[data-testid="shot-row"][data-state="synced"]').count()).toBe(100);
  expect(await page.locator('[data-testid="shot-row"]:not([data-state="synced"])').count()).toBe(0);
  await page.getByRole("link", { name: "Outbox", exact: true }).click();
  await page.getByTestId("outbox-summary").waitFor();
  expect(await page.getByTestId("outbox-summary").textContent()).toBe("Nothing waiting: everything saved on this tablet is on the server.");
  await context.close();
}, 240_000);
